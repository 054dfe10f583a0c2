/**
 * How dates and times read on every screen (en-GB), in one format: "5 Mar 2024", and with a time
 * "5 Mar 2024, 14:30". Screens never show raw "2024-03-05" or "05/03/2024"; form inputs and CSV
 * files keep ISO dates.
 */

/** A calendar date ("2024-03-05", read at midday so no time zone moves it) or an instant, as "5 Mar 2024"; "—" when there is none. */
export const fmtDate = (d: string | null | undefined) =>
  d ? new Date(d.length === 10 ? `${d}T12:00:00` : d).toLocaleDateString('en-GB', { day: 'numeric', month: 'short', year: 'numeric' }) : '—';

/** An instant as "5 Mar 2024, 14:30". */
export const fmtDateTime = (d: string) => new Date(d).toLocaleString('en-GB', { day: 'numeric', month: 'short', year: 'numeric', hour: '2-digit', minute: '2-digit' });
