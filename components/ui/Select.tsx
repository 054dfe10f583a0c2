import type { SelectHTMLAttributes } from 'react';
import { forwardRef, useId } from 'react';

/** A labelled select whose error is tied to it with aria-describedby. */
export const Select = forwardRef<
  HTMLSelectElement,
  SelectHTMLAttributes<HTMLSelectElement> & { label: string; error?: string; options: readonly { value: string; label: string }[]; placeholder?: string }
>(function Select({ label, error, options, placeholder, id, ...rest }, ref) {
  const auto = useId();
  const selectId = id ?? auto;
  return (
    <div>
      <label htmlFor={selectId} className="field-label">
        {label}
      </label>
      <select
        ref={ref}
        id={selectId}
        className="field-input"
        aria-invalid={error ? true : undefined}
        aria-describedby={error ? `${selectId}-error` : undefined}
        {...rest}
      >
        {placeholder !== undefined && <option value="">{placeholder}</option>}
        {options.map((o) => (
          <option key={o.value} value={o.value}>
            {o.label}
          </option>
        ))}
      </select>
      {error && (
        <p id={`${selectId}-error`} className="field-error" role="alert">
          {error}
        </p>
      )}
    </div>
  );
});

export function optionsOf<T extends string>(values: readonly T[], labels: Record<T, string>) {
  return values.map((value) => ({ value, label: labels[value] }));
}
