/**
 * The local mail fake's HTTP API (scripts/mail-fake.ts) answers only requests that carry the
 * per-run secret the scripts generate (MAILBOX_SECRET) in this header. Pure: shared by the fake,
 * the app, the worker and the tests.
 */
export const MAILBOX_SECRET_HEADER = 'x-mailbox-secret';

export const mailboxHeaders = (secret: string | undefined): Record<string, string> =>
  secret ? { [MAILBOX_SECRET_HEADER]: secret } : {};
