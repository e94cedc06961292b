import { useId, useState, type DragEvent } from 'react';
import { UPLOAD_KIND_LABEL, type UploadView } from '../../api/uploads';
import { ErrorNotice } from '../QueryState';

export type UploadStatus =
  | { phase: 'idle' }
  | { phase: 'uploading'; loaded: number; total: number }
  | { phase: 'done'; upload: UploadView }
  | { phase: 'error'; error: unknown };

/** 1 234 567 bytes → "1.2 MB": sizes people can read at a glance. */
export function fileSize(bytes: number): string {
  if (bytes < 1024) return `${bytes} B`;
  const units = ['kB', 'MB', 'GB'];
  let v = bytes / 1024;
  let i = 0;
  while (v >= 1024 && i < units.length - 1) {
    v /= 1024;
    i++;
  }
  return `${v.toFixed(v < 10 ? 1 : 0)} ${units[i]}`;
}

interface UploadZoneProps {
  file: File | null;
  status: UploadStatus;
  onFile: (file: File) => void;
  disabled?: boolean;
}

/** Drag a file here or pick it with the "Input file" field; shows progress and the SHA-256. */
export function UploadZone({ file, status, onFile, disabled }: UploadZoneProps) {
  const inputId = useId();
  const [over, setOver] = useState(false);
  const drop = (e: DragEvent) => {
    e.preventDefault();
    setOver(false);
    const f = e.dataTransfer.files[0];
    if (f && !disabled) onFile(f);
  };
  const pct =
    status.phase === 'uploading' && status.total > 0
      ? Math.round((100 * status.loaded) / status.total)
      : status.phase === 'done'
        ? 100
        : 0;
  return (
    <div className="flex flex-col gap-3">
      <div
        onDragEnter={(e) => {
          e.preventDefault();
          setOver(true);
        }}
        onDragOver={(e) => {
          e.preventDefault();
          e.dataTransfer.dropEffect = 'copy';
        }}
        onDragLeave={() => setOver(false)}
        onDrop={drop}
        data-testid="drop-zone"
        className={`flex flex-col gap-2 rounded-sm border-2 border-dashed px-4 py-5 ${
          over ? 'border-accent bg-paper' : 'border-edge bg-panel'
        }`}
      >
        <p className="text-sm">
          Drop a file here, or choose one. Sightline reads an{' '}
          <strong className="font-medium">arrival-time table</strong> (CSV with{' '}
          <code className="num text-xs">source, mjd, freq_mhz, err_us</code>, or JSON/NDJSON), a{' '}
          <strong className="font-medium">profile set</strong> (JSON with{' '}
          <code className="num text-xs">profiles</code>) or a saved{' '}
          <strong className="font-medium">DM-per-visit result</strong> (JSON).
        </p>
        <div className="flex flex-wrap items-center gap-3">
          <label htmlFor={inputId} className="text-sm font-medium">
            Input file
          </label>
          <input
            id={inputId}
            type="file"
            accept=".csv,.json,.ndjson,.jsonl,.txt,text/csv,application/json"
            disabled={disabled}
            onChange={(e) => {
              const f = e.target.files?.[0];
              if (f) onFile(f);
            }}
            className="text-sm file:mr-3 file:rounded-sm file:border file:border-edge file:bg-paper file:px-2 file:py-1 file:text-sm file:text-ink"
          />
        </div>
      </div>

      {file && (
        <div aria-live="polite" className="flex flex-col gap-2 text-sm">
          <div className="flex flex-wrap items-baseline gap-x-3">
            <span className="font-medium">{file.name}</span>
            <span className="num text-xs text-ink-soft">{fileSize(file.size)}</span>
            <span className="text-ink-soft">
              {status.phase === 'uploading' && `uploading… ${pct} %`}
              {status.phase === 'done' &&
                `uploaded: ${UPLOAD_KIND_LABEL[status.upload.kind] ?? status.upload.kind}`}
              {status.phase === 'error' && 'not uploaded'}
            </span>
          </div>
          {(status.phase === 'uploading' || status.phase === 'done') && (
            <progress
              max={100}
              value={pct}
              aria-label="Upload progress"
              className="h-2 w-full overflow-hidden rounded-sm accent-accent [&::-moz-progress-bar]:bg-accent [&::-webkit-progress-bar]:bg-rule [&::-webkit-progress-value]:bg-accent"
            />
          )}
          {status.phase === 'done' && (
            <dl className="grid grid-cols-[max-content_1fr] gap-x-3 gap-y-0.5 text-xs">
              <dt className="text-ink-soft">SHA-256</dt>
              <dd className="num break-all">{status.upload.sha256}</dd>
              <dt className="text-ink-soft">Recorded size</dt>
              <dd className="num">{status.upload.size_bytes.toLocaleString('en-GB')} bytes</dd>
            </dl>
          )}
          {status.phase === 'error' && <ErrorNotice error={status.error} />}
        </div>
      )}
    </div>
  );
}
