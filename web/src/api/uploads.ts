import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import type {
  AnalysisErrorBody,
  AnalysisKind,
  AnalysisRequestInput,
} from '../../../shared/schemas/analysis';
import { api, ApiError } from './client';

export type UploadKind = 'toas' | 'profiles' | 'result';

/** What POST /api/uploads answers (server/routes/uploads.ts uploadView). */
export interface UploadView {
  id: string;
  file_name: string;
  size_bytes: number;
  sha256: string;
  kind: UploadKind;
  uploaded_by?: string;
  created_at?: string;
}

export type JobState = 'queued' | 'running' | 'done' | 'failed';

/** A server-side analysis (server/routes/analyses.ts jobView). */
export interface AnalysisJobView {
  id: string;
  url: string;
  kind: AnalysisKind;
  upload_id: string;
  params: Record<string, unknown>;
  state: JobState;
  run_id: string | null;
  error: AnalysisErrorBody | null;
  created_by: string;
  created_at: string;
  started_at: string | null;
  finished_at: string | null;
}

/** Which analyses read which upload (the server's own table, server/routes/analyses.ts). */
export const ANALYSES_FOR: Record<UploadKind, AnalysisKind[]> = {
  toas: ['dm-fit', 'dm-series'],
  result: ['dm-series'],
  profiles: ['scatter-fit'],
};

export const UPLOAD_KIND_LABEL: Record<UploadKind, string> = {
  toas: 'arrival-time table',
  result: 'DM-per-visit result',
  profiles: 'profile set',
};

export interface UploadProgress {
  loaded: number;
  total: number;
}

/**
 * Send one file to POST /api/uploads as multipart (field "file"). XMLHttpRequest rather than
 * fetch, because only XHR reports upload progress; the session cookie goes along (same origin).
 */
export function uploadFile(
  file: File,
  onProgress?: (p: UploadProgress) => void,
  signal?: AbortSignal,
): Promise<UploadView> {
  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest();
    xhr.open('POST', '/api/uploads');
    // same origin: the session cookie goes along without withCredentials
    xhr.setRequestHeader('Accept', 'application/json');
    xhr.responseType = 'text';
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable) onProgress?.({ loaded: e.loaded, total: e.total });
    };
    xhr.onload = () => {
      let body: unknown;
      try {
        body = xhr.responseText ? JSON.parse(xhr.responseText) : undefined;
      } catch {
        body = undefined;
      }
      if (xhr.status === 201 || (xhr.status >= 200 && xhr.status < 300)) {
        onProgress?.({ loaded: file.size, total: file.size });
        resolve(body as UploadView);
        return;
      }
      const err = (body as { error?: { code?: unknown; message?: unknown; details?: unknown } })
        ?.error;
      reject(
        new ApiError(
          xhr.status,
          typeof err?.code === 'string' ? err.code : 'http_error',
          typeof err?.message === 'string'
            ? err.message
            : xhr.status === 413
              ? 'the file is larger than the upload limit'
              : `the upload answered HTTP ${xhr.status}`,
          err?.details,
        ),
      );
    };
    xhr.onerror = () =>
      reject(new ApiError(0, 'network', 'the server cannot be reached; check your connection'));
    xhr.onabort = () => reject(new DOMException('upload cancelled', 'AbortError'));
    signal?.addEventListener('abort', () => xhr.abort(), { once: true });
    const form = new FormData();
    form.append('file', file, file.name);
    xhr.send(form);
  });
}

/** Queue an analysis of an upload: 202 with the job, which then runs on the server's workers. */
export function useStartAnalysis() {
  return useMutation({
    mutationFn: (body: AnalysisRequestInput) => api<AnalysisJobView>('POST', '/api/analyses', body),
  });
}

/** A job, asked for again every second until it is done or failed. */
export function useAnalysisJob(id: string | undefined) {
  const qc = useQueryClient();
  return useQuery({
    queryKey: ['analysis', id],
    queryFn: async ({ signal }) => {
      const job = await api<AnalysisJobView>('GET', `/api/analyses/${id}`, undefined, signal);
      if (job.state === 'done') await qc.invalidateQueries({ queryKey: ['runs'] });
      return job;
    },
    enabled: !!id,
    refetchInterval: (q) => {
      const s = q.state.data?.state;
      return s === 'done' || s === 'failed' ? false : 1000;
    },
    refetchIntervalInBackground: true,
  });
}
