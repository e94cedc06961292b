import { zodResolver } from '@hookform/resolvers/zod';
import { useEffect, useRef, useState, type ReactNode } from 'react';
import { FormProvider, useForm, useWatch, type Resolver } from 'react-hook-form';
import { useNavigate } from 'react-router';
import { z } from 'zod';
import {
  ANALYSIS_KINDS,
  analysisRequestSchema,
  dmFitParamsSchema,
  dmSeriesParamsSchema,
  scatterFitParamsSchema,
  type AnalysisKind,
} from '../../../../shared/schemas/analysis';
import {
  ANALYSES_FOR,
  UPLOAD_KIND_LABEL,
  uploadFile,
  useAnalysisJob,
  useStartAnalysis,
  type UploadView,
} from '../../api/uploads';
import { ErrorNotice } from '../QueryState';
import { SelectInput } from './fields';
import { ParamFields, type AnalysisFormValues } from './ParamFields';
import { JobStatus } from './JobStatus';
import { UploadZone, type UploadStatus } from './UploadZone';

/** The request without its upload (that comes from the upload step): the shared param schemas. */
const formSchema = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('dm-fit'), params: dmFitParamsSchema.default({}) }),
  z.object({ kind: z.literal('dm-series'), params: dmSeriesParamsSchema.default({}) }),
  z.object({ kind: z.literal('scatter-fit'), params: scatterFitParamsSchema.default({}) }),
]);

/** Zod's generic messages, said the way the form's labels read. */
function message(iss: {
  code: string;
  input?: unknown;
  expected?: string;
  minimum?: unknown;
  maximum?: unknown;
  inclusive?: boolean;
  values?: unknown[];
}): string | undefined {
  // α of a scattering fit is "free" or a number: a bad number is a number problem
  if (iss.code === 'invalid_value' && iss.values?.includes('free')) return 'enter a number';
  if (iss.code === 'invalid_type' && iss.expected === 'int') return 'enter a whole number';
  if (iss.code === 'invalid_type' && iss.expected === 'number') return 'enter a number';
  if (iss.code === 'too_small')
    return iss.inclusive === false
      ? `must be more than ${iss.minimum}`
      : `must be at least ${iss.minimum}`;
  if (iss.code === 'too_big')
    return iss.inclusive === false
      ? `must be less than ${iss.maximum}`
      : `must be at most ${iss.maximum}`;
  return undefined;
}

const resolver = zodResolver(formSchema, {
  error: (iss) => message(iss as Parameters<typeof message>[0]),
}) as unknown as Resolver<AnalysisFormValues>;

const article = (noun: string) => `${/^[aeiou]/i.test(noun) ? 'an' : 'a'} ${noun}`;

export const ANALYSIS_LABEL: Record<AnalysisKind, string> = {
  'dm-fit': 'DM per visit (dm-fit)',
  'dm-series': 'DM series (dm-series)',
  'scatter-fit': 'Scattering fit on profiles (scatter-fit)',
};

function Step({ n, title, children }: { n: number; title: string; children: ReactNode }) {
  return (
    <section className="flex flex-col gap-3">
      <h2 className="flex items-baseline gap-2 text-base font-semibold">
        <span className="num text-sm text-ink-soft">{n}</span>
        {title}
      </h2>
      {children}
    </section>
  );
}

/**
 * Upload a file (it starts as soon as one is chosen, so its kind and SHA-256 show early), choose
 * the analysis and its options (validated as you type with the shared schemas), run it on the
 * server and follow the job until its run exists.
 */
export function NewAnalysisForm() {
  const navigate = useNavigate();
  const [file, setFile] = useState<File | null>(null);
  const [upload, setUpload] = useState<UploadStatus>({ phase: 'idle' });
  const [notice, setNotice] = useState<string>();
  const [jobId, setJobId] = useState<string>();
  const pending = useRef<{ promise: Promise<UploadView>; abort: AbortController } | null>(null);
  const start = useStartAnalysis();
  const job = useAnalysisJob(jobId);

  const form = useForm<AnalysisFormValues>({
    resolver,
    mode: 'onChange',
    shouldUnregister: true,
    defaultValues: { kind: 'dm-fit', params: {} },
  });
  const kind = useWatch({ control: form.control, name: 'kind' });
  const uploadedKind = upload.phase === 'done' ? upload.upload.kind : undefined;
  const allowed: readonly AnalysisKind[] = uploadedKind
    ? ANALYSES_FOR[uploadedKind]
    : ANALYSIS_KINDS;

  // the analysis follows what the file turned out to hold
  useEffect(() => {
    if (!allowed.includes(kind)) form.setValue('kind', allowed[0], { shouldValidate: true });
  }, [allowed, kind, form]);

  const runId = job.data?.state === 'done' ? job.data.run_id : null;
  useEffect(() => {
    if (runId) navigate(`/runs/${runId}`);
  }, [runId, navigate]);

  useEffect(() => () => pending.current?.abort.abort(), []);

  const beginUpload = (f: File): Promise<UploadView> => {
    pending.current?.abort.abort();
    const abort = new AbortController();
    setFile(f);
    setNotice(undefined);
    setJobId(undefined);
    start.reset();
    setUpload({ phase: 'uploading', loaded: 0, total: f.size });
    const promise = uploadFile(
      f,
      (p) => {
        if (!abort.signal.aborted) setUpload({ phase: 'uploading', ...p });
      },
      abort.signal,
    );
    pending.current = { promise, abort };
    promise.then(
      (u) => {
        if (pending.current?.promise === promise) setUpload({ phase: 'done', upload: u });
      },
      (e: unknown) => {
        if (pending.current?.promise === promise && (e as Error).name !== 'AbortError')
          setUpload({ phase: 'error', error: e });
      },
    );
    return promise;
  };

  const run = async (values: AnalysisFormValues) => {
    if (!file) return;
    setNotice(undefined);
    let uploaded: UploadView;
    try {
      uploaded =
        upload.phase === 'done'
          ? upload.upload
          : upload.phase === 'uploading' && pending.current
            ? await pending.current.promise
            : await beginUpload(file);
    } catch {
      return; // the upload step shows why
    }
    if (!ANALYSES_FOR[uploaded.kind].includes(values.kind)) {
      setNotice(
        `${uploaded.file_name} is ${article(UPLOAD_KIND_LABEL[uploaded.kind])}, which ${ANALYSIS_LABEL[values.kind]} does not read. The analysis was switched: check its options and run again.`,
      );
      return;
    }
    const body = analysisRequestSchema.safeParse({
      kind: values.kind,
      upload_id: uploaded.id,
      params: values.params,
    });
    if (!body.success) {
      setNotice(body.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; '));
      return;
    }
    const made = await start.mutateAsync(body.data).catch(() => undefined);
    if (made) setJobId(made.id);
  };

  const { isValid, isSubmitting } = form.formState;
  const active =
    isSubmitting ||
    start.isPending ||
    job.data?.state === 'queued' ||
    job.data?.state === 'running' ||
    (!!jobId && !job.data);
  const before =
    isSubmitting && upload.phase === 'uploading'
      ? 'Waiting for the upload to finish…'
      : start.isPending
        ? 'Sending the request…'
        : undefined;

  return (
    <FormProvider {...form}>
      <form noValidate onSubmit={form.handleSubmit(run)} className="flex max-w-3xl flex-col gap-8">
        <Step n={1} title="Data">
          <UploadZone file={file} status={upload} onFile={beginUpload} disabled={active} />
        </Step>

        <Step n={2} title="Fit and options">
          <div className="rounded-sm border border-rule bg-panel p-4">
            <div className="mb-4 max-w-md">
              <SelectInput
                label="Analysis"
                hint={
                  uploadedKind
                    ? `The analyses that read ${article(UPLOAD_KIND_LABEL[uploadedKind])}.`
                    : 'Arrival times: DM per visit or DM series; profiles: scattering fit.'
                }
                error={form.formState.errors.kind?.message}
                options={allowed.map((k) => ({ value: k, label: ANALYSIS_LABEL[k] }))}
                registration={form.register('kind')}
              />
            </div>
            <ParamFields kind={kind} />
            <p className="mt-4 text-xs text-ink-soft">
              Empty fields keep the command-line defaults. The options are stored with the run.
            </p>
          </div>
        </Step>

        <Step n={3} title="Run">
          <div className="flex flex-wrap items-center gap-3">
            <button
              type="submit"
              disabled={!file || !isValid || active}
              className="rounded-sm bg-accent px-4 py-1.5 text-sm font-medium text-panel disabled:cursor-not-allowed disabled:opacity-50"
            >
              Upload and run
            </button>
            <span className="text-xs text-ink-soft">
              {!file
                ? 'Choose a file first.'
                : !isValid
                  ? 'Fix the marked options first.'
                  : upload.phase === 'done'
                    ? 'The file is uploaded; this runs the analysis.'
                    : upload.phase === 'uploading'
                      ? 'Runs as soon as the upload has finished.'
                      : 'Uploads the file, then runs the analysis on the server.'}
            </span>
          </div>
          {notice && (
            <p role="alert" className="text-sm text-alert">
              {notice}
            </p>
          )}
          {start.isError && <ErrorNotice error={start.error} />}
          <JobStatus
            job={job.data}
            before={before}
            pollError={job.isError ? job.error : undefined}
          />
        </Step>
      </form>
    </FormProvider>
  );
}
