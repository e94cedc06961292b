import { useState, type ReactNode } from 'react';
import { buttonClass } from './AdminSection';

/**
 * A secret the server shows exactly once (a new API token, a generated password): shown plainly
 * in a labelled element, with a copy button and a warning, until the admin dismisses it.
 */
export function SecretOnce({
  label,
  secret,
  children,
  onDismiss,
}: {
  /** accessible name of the element holding the secret */
  label: string;
  secret: string;
  children: ReactNode;
  onDismiss: () => void;
}) {
  const [copied, setCopied] = useState<'yes' | 'no' | undefined>();
  const copy = async () => {
    try {
      await navigator.clipboard.writeText(secret);
      setCopied('yes');
    } catch {
      setCopied('no');
    }
  };
  return (
    <div className="flex flex-col gap-2 rounded-sm border-2 border-accent bg-panel p-3 text-sm">
      <div>{children}</div>
      <p className="text-sm font-medium text-alert">
        Copy it now: it will not be shown again (only a hash is kept).
      </p>
      <div className="flex flex-wrap items-center gap-2">
        <output
          aria-label={label}
          className="num block min-w-0 flex-1 rounded-sm border border-rule bg-paper px-2 py-1.5 text-sm break-all select-all"
        >
          {secret}
        </output>
        <button type="button" className={buttonClass} onClick={copy}>
          Copy
        </button>
        <button type="button" className={buttonClass} onClick={onDismiss}>
          Done
        </button>
      </div>
      {copied && (
        <p role="status" className="text-xs text-ink-soft">
          {copied === 'yes'
            ? 'Copied to the clipboard.'
            : 'The browser did not allow copying: select the text and copy it yourself.'}
        </p>
      )}
    </div>
  );
}
