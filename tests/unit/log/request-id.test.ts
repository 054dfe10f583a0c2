import { describe, expect, it } from 'vitest';
import { Writable } from 'node:stream';
import pino from 'pino';
import { REDACT_PATHS, logPath, requestIdFrom, safeError, scrubText } from '@/lib/log/request-id';

const h = (v?: string) => new Headers(v === undefined ? {} : { 'X-Request-Id': v });

describe('request ids (lib/log/request-id.ts)', () => {
  it('takes a well-formed X-Request-Id only behind a configured proxy', () => {
    expect(requestIdFrom(h('abc-123_X'), true)).toBe('abc-123_X');
    expect(requestIdFrom(h('abc-123_X'), false)).toMatch(/^[0-9a-f-]{36}$/);
    expect(requestIdFrom(h(), true)).toMatch(/^[0-9a-f-]{36}$/);
    expect(requestIdFrom(h('a b'), true)).toMatch(/^[0-9a-f-]{36}$/); // not a job-safe id
    expect(requestIdFrom(h('x'.repeat(65)), true)).toMatch(/^[0-9a-f-]{36}$/);
    expect(requestIdFrom(h(), false)).not.toBe(requestIdFrom(h(), false));
  });

  it('replaces e-mail addresses in free text', () => {
    expect(scrubText("550 5.1.1 <jo.o'neil+x@mail.example.org>: unknown")).toBe('550 5.1.1 <[email]>: unknown');
    expect(scrubText('rcpt a_b@c.invalid and d@e.fg')).toBe('rcpt [email] and [email]');
    expect(scrubText('no address here @ all')).toBe('no address here @ all');
  });

  it('keeps an error’s class, code and frames, and its message only when asked (our own errors)', () => {
    const e = Object.assign(new Error("insert into patient values ('Ann Example', 'ann@example.invalid')"), { code: '23505', detail: 'Key (email)=(ann@example.invalid)' });
    const s = safeError(e);
    expect(s).toMatchObject({ type: 'Error', code: '23505' });
    expect(JSON.stringify(s)).not.toMatch(/Ann Example|ann@example/);
    expect(safeError(new Error('mail to bo@example.invalid refused'), true).message).toBe('mail to [email] refused');
    expect(safeError('a string')).toEqual({ type: 'string' });
  });

  it('pino with REDACT_PATHS censors names, e-mails, phones and notes at any of three depths', () => {
    const lines: string[] = [];
    const log = pino({ redact: { paths: [...REDACT_PATHS], censor: '[redacted]' } }, new Writable({ write: (c, _e, done) => (lines.push(String(c)), done()) }));
    log.info({ email: 'a@b.invalid', patient: { id: 1 }, visit: { note: 'called', id: 'v1' }, job: { data: { phone: '07700 900123', name: 'Ann' } } }, 'x');
    const line = JSON.parse(lines[0]!) as Record<string, unknown>;
    expect(line).toMatchObject({ email: '[redacted]', patient: '[redacted]', visit: { note: '[redacted]', id: 'v1' }, job: { data: { phone: '[redacted]', name: '[redacted]' } } });
  });

  it('logs the path without its query, long segments (tokens) cut', () => {
    expect(logPath('http://x/api/patients?q=Ann%20Example')).toBe('/api/patients');
    expect(logPath(`http://x/api/r/${'t'.repeat(60)}/x`)).toBe('/api/r/:token/x');
  });
});
