import pino, { type Logger } from 'pino';
import { REDACT_PATHS, scrubText } from './request-id';

/**
 * Structured logs (pino, one JSON object a line on stdout) for the web server and the worker.
 * Nothing identifying a patient goes into a line: the fields of REDACT_PATHS are written as
 * "[redacted]", and e-mail addresses in any message are replaced (scrubText). Log ids (request,
 * practice, visit, job), codes and counts — never names, addresses, phone numbers or notes.
 * The web request's id: lib/log/context.ts.
 */
export type { Logger };

/** Where lines go: stdout; tests swap it (setLogSink) to read what was written. */
let sink: (line: string) => void = (line) => void process.stdout.write(line);
export function setLogSink(next: ((line: string) => void) | null): void {
  sink = next ?? ((line) => void process.stdout.write(line));
}

const g = globalThis as unknown as { __laminaLoggers?: Map<string, Logger> };

/** The logger of a process part ('web', 'worker'); LOG_LEVEL sets the level (info by default). */
export function logger(service: 'web' | 'worker' | 'script'): Logger {
  g.__laminaLoggers ??= new Map();
  let l = g.__laminaLoggers.get(service);
  if (!l) {
    l = pino(
      {
        base: { service },
        level: process.env.LOG_LEVEL ?? 'info',
        redact: { paths: [...REDACT_PATHS], censor: '[redacted]' },
        timestamp: pino.stdTimeFunctions.isoTime,
        hooks: {
          logMethod(args, method) {
            // Free text (the message and any string argument) is scrubbed of e-mail addresses.
            method.apply(this, args.map((a) => (typeof a === 'string' ? scrubText(a) : a)) as Parameters<typeof method>);
          },
        },
      },
      { write: (line: string) => sink(line) },
    );
    g.__laminaLoggers.set(service, l);
  }
  return l;
}

export { currentRequestId, withRequestId } from './context';
