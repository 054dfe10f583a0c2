import type { InputHTMLAttributes, ReactNode } from 'react';
import { forwardRef, useId } from 'react';

/** A labelled input whose error is announced and tied to it with aria-describedby. */
export const Field = forwardRef<HTMLInputElement, InputHTMLAttributes<HTMLInputElement> & { label: string; error?: string; hint?: ReactNode }>(
  function Field({ label, error, hint, id, ...rest }, ref) {
    const auto = useId();
    const inputId = id ?? auto;
    const describedBy = [hint ? `${inputId}-hint` : null, error ? `${inputId}-error` : null].filter(Boolean).join(' ') || undefined;
    return (
      <div>
        <label htmlFor={inputId} className="field-label">
          {label}
        </label>
        <input ref={ref} id={inputId} className="field-input" aria-invalid={error ? true : undefined} aria-describedby={describedBy} {...rest} />
        {hint && (
          <p id={`${inputId}-hint`} className="mt-1 text-xs text-ink-500">
            {hint}
          </p>
        )}
        {error && (
          <p id={`${inputId}-error`} className="field-error" role="alert">
            {error}
          </p>
        )}
      </div>
    );
  },
);
