import type { InputHTMLAttributes, ReactNode } from 'react';
import { forwardRef } from 'react';

/** A checkbox with its label beside it. */
export const Check = forwardRef<HTMLInputElement, InputHTMLAttributes<HTMLInputElement> & { label: ReactNode }>(function Check({ label, ...rest }, ref) {
  return (
    <label className="flex items-center gap-2 text-sm">
      <input ref={ref} type="checkbox" className="h-4 w-4 accent-dura-700" {...rest} />
      {label}
    </label>
  );
});

/** A labelled group of checkboxes; with `errorId`, its error is also tied to the group by aria-describedby. */
export function CheckGroup({ legend, error, errorId, children }: { legend: string; error?: string; errorId?: string; children: ReactNode }) {
  return (
    <fieldset aria-describedby={error && errorId ? errorId : undefined}>
      <legend className="field-label">{legend}</legend>
      <div className="flex flex-wrap gap-x-5 gap-y-2">{children}</div>
      {error && (
        <p id={errorId} className="field-error" role="alert">
          {error}
        </p>
      )}
    </fieldset>
  );
}
