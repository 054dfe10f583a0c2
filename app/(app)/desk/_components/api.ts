/** Small client helpers for the desk's JSON API (errors carry the server's message). */
export async function getJson<T>(url: string): Promise<T> {
  const res = await fetch(url);
  const body = await res.json().catch(() => ({}));
  if (!res.ok) throw new Error((body as { message?: string }).message ?? 'The desk could not be loaded.');
  return body as T;
}

export async function postJson<T>(url: string, data: unknown): Promise<T> {
  const res = await fetch(url, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(data) });
  const body = await res.json().catch(() => ({}));
  if (!res.ok) {
    const b = body as { message?: string; fieldErrors?: Record<string, string[]> };
    throw new Error(Object.values(b.fieldErrors ?? {})[0]?.[0] ?? b.message ?? 'That did not work. Nothing was changed.');
  }
  return body as T;
}
