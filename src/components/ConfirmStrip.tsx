import type { ReactNode } from 'react';

/**
 * The second step of a destructive action: the consequence in words, a warning-coloured button that
 * does it and one that backs out, and what went wrong if it failed. The group's accessible name says
 * what is being confirmed.
 */
export function ConfirmStrip({
  label,
  children,
  confirm,
  pendingText,
  keep,
  pending,
  onConfirm,
  onKeep,
  failure,
}: {
  /** Accessible name of the group: "Confirm revoking …". */
  label: string;
  /** The question, with its consequences. */
  children: ReactNode;
  confirm: string;
  pendingText: string;
  keep: string;
  pending: boolean;
  onConfirm: () => void;
  onKeep: () => void;
  /** Shown under the buttons when the action failed. */
  failure?: ReactNode;
}) {
  return (
    <div role="group" aria-label={label} className="flex flex-wrap items-center gap-2">
      <span>{children}</span>
      <button type="button" className="btn border-warning bg-warning text-white hover:bg-[#a83320]" disabled={pending} onClick={onConfirm}>
        {pending ? pendingText : confirm}
      </button>
      <button type="button" className="btn" onClick={onKeep} disabled={pending}>
        {keep}
      </button>
      {failure && (
        <p role="alert" className="error-text w-full">
          {failure}
        </p>
      )}
    </div>
  );
}
