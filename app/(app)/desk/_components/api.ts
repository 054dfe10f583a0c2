/** Small client helpers for the desk's JSON API (errors carry the server's message). */
export async function getJson<T>(url: string): Promise<T> {
  const res = await fetch(url);
  const body = await res.json().catch(() => ({}));
  if (!res.ok) throw new Error(errorText(body) ?? 'The desk could not be loaded.');
  return body as T;
}

export async function postJson<T>(url: string, data: unknown): Promise<T> {
  const res = await fetch(url, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(data) });
  const body = await res.json().catch(() => ({}));
  if (!res.ok) throw new Error(errorText(body) ?? 'That did not work. Nothing was changed.');
  return body as T;
}

/** The server's words for a refusal: the first field's message (it names the field), else the message. */
function errorText(body: unknown): string | undefined {
  const b = body as { message?: string; fieldErrors?: Record<string, string[]> };
  return Object.values(b.fieldErrors ?? {})[0]?.[0] ?? b.message;
}
