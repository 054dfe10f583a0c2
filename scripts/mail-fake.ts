/**
 * Lamina's local SMTP fake.
 *
 * An SMTP server (no auth, no TLS, loopback only) that parses every message it accepts and
 * stores it as one JSON file in a directory, plus a small loopback HTTP API to read them. Every
 * route but /health answers only a request carrying the per-run secret (MAILBOX_SECRET, which the
 * scripts generate and hand to the app, the worker and the tests) in the `x-mailbox-secret`
 * header; without it, 401. A part of Lamina's demo mode only (LAMINA_DEMO=1).
 *
 *   GET    /health            {ok, pid, smtpPort, httpPort, dir, messages, refusing, hanging} (no secret)
 *   GET    /messages          stored messages, newest first; ?to=address filters on any
 *                             recipient (To, Cc or SMTP envelope); ?limit=N
 *   GET    /messages/:id      one message, 404 if unknown
 *   DELETE /messages          remove every stored message (for tests)
 *   DELETE /messages/:id      remove one
 *   POST   /control           {"refuse": N}: the next N SMTP transactions fail with a 451
 *                             temporary error (fault tests); {"refuse": 0} stops refusing.
 *                             {"hang": N}: the next N transactions get the whole message but no
 *                             answer to it, ever (not stored: a relay that accepted the connection
 *                             and then stopped answering); the client's timeout has to end them.
 *                             Either key or both; a key left out keeps its count.
 *
 * Run: MAILBOX_SECRET=… node --import tsx scripts/mail-fake.ts --smtp-port 2525 --http-port 2526 --dir .data/mail/messages
 * (or MAIL_FAKE_SMTP_PORT, MAIL_FAKE_HTTP_PORT, MAIL_FAKE_DIR). scripts/lib/services.sh starts it.
 * The secret comes from the environment only (a command line is readable by every local user).
 */
import { SMTPServer, type SMTPServerAddress, type SMTPServerDataStream, type SMTPServerSession } from 'smtp-server';
import { simpleParser, type AddressObject, type ParsedMail } from 'mailparser';
import http from 'node:http';
import fs from 'node:fs/promises';
import { renameSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import crypto from 'node:crypto';
import { parseArgs } from 'node:util';
import { z } from 'zod';
import { MAILBOX_SECRET_HEADER } from '../lib/mail/mailbox-secret';

const HOST = '127.0.0.1';

// ---------------------------------------------------------------------------------------------
// Configuration (CLI flags win over environment variables)

const Port = z.coerce.number().int().min(1).max(65535);
const ConfigSchema = z.object({
  smtpPort: Port.default(2525),
  httpPort: Port.default(2526),
  dir: z.string().min(1).default('.data/mail/messages'),
  pidFile: z.string().min(1).optional(),
  maxMessageBytes: z.coerce.number().int().positive().default(25 * 1024 * 1024),
  secret: z.string({ error: 'MAILBOX_SECRET is required (at least 16 characters)' }).min(16, 'MAILBOX_SECRET must have at least 16 characters'),
});
type Config = z.infer<typeof ConfigSchema>;

function readConfig(argv: string[], env: NodeJS.ProcessEnv): Config {
  const { values } = parseArgs({
    args: argv,
    options: {
      'smtp-port': { type: 'string' },
      'http-port': { type: 'string' },
      dir: { type: 'string' },
      'pid-file': { type: 'string' },
      'max-message-bytes': { type: 'string' },
    },
    strict: true,
  });
  const parsed = ConfigSchema.safeParse({
    smtpPort: values['smtp-port'] ?? env.MAIL_FAKE_SMTP_PORT,
    httpPort: values['http-port'] ?? env.MAIL_FAKE_HTTP_PORT,
    dir: values.dir ?? env.MAIL_FAKE_DIR,
    pidFile: values['pid-file'] ?? env.MAIL_FAKE_PID_FILE,
    maxMessageBytes: values['max-message-bytes'] ?? env.MAIL_FAKE_MAX_MESSAGE_BYTES,
    secret: env.MAILBOX_SECRET,
  });
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join('.')}: ${i.message}`);
    throw new Error(`mail-fake: invalid configuration:\n${lines.join('\n')}`);
  }
  if (parsed.data.smtpPort === parsed.data.httpPort) throw new Error('mail-fake: SMTP and HTTP ports must differ');
  return { ...parsed.data, dir: path.resolve(parsed.data.dir) };
}

// ---------------------------------------------------------------------------------------------
// Stored message shape

export interface StoredAttachment {
  filename: string | null;
  contentType: string;
  contentId: string | null;
  size: number;
  /** base64 */
  content: string;
}

export interface StoredMessage {
  id: string;
  receivedAt: string;
  messageId: string | null;
  envelope: { mailFrom: string | null; rcptTo: string[] };
  /** The From header as written, e.g. `Lamina <no-reply@lamina.invalid>`. */
  from: string;
  fromAddress: string | null;
  /** Addresses (lower-case) of the To header. */
  to: string[];
  cc: string[];
  replyTo: string | null;
  subject: string;
  text: string;
  html: string | null;
  /** Raw header values by lower-case name; a repeated header gives an array. */
  headers: Record<string, string | string[]>;
  listUnsubscribe: string | null;
  listUnsubscribePost: string | null;
  attachments: StoredAttachment[];
  size: number;
}

const ID_RE = /^\d{13}-\d{6}-[0-9a-f]{8}$/;
let sequence = 0;
function newId(now: Date): string {
  sequence = (sequence + 1) % 1_000_000;
  return `${String(now.getTime()).padStart(13, '0')}-${String(sequence).padStart(6, '0')}-${crypto.randomBytes(4).toString('hex')}`;
}

function addresses(field: AddressObject | AddressObject[] | undefined): string[] {
  const list = field === undefined ? [] : Array.isArray(field) ? field : [field];
  const out: string[] = [];
  const walk = (entries: AddressObject['value']) => {
    for (const a of entries) {
      if (a.address) out.push(a.address.toLowerCase());
      if (a.group) walk(a.group);
    }
  };
  for (const f of list) walk(f.value);
  return out;
}

function rawHeaders(parsed: ParsedMail): Record<string, string | string[]> {
  const headers: Record<string, string | string[]> = {};
  for (const { key, line } of parsed.headerLines) {
    const colon = line.indexOf(':');
    const value = (colon >= 0 ? line.slice(colon + 1) : '').replace(/\r?\n[ \t]+/g, ' ').trim();
    const existing = headers[key];
    if (existing === undefined) headers[key] = value;
    else headers[key] = Array.isArray(existing) ? [...existing, value] : [existing, value];
  }
  return headers;
}

function firstHeader(headers: Record<string, string | string[]>, key: string): string | null {
  const v = headers[key];
  return v === undefined ? null : Array.isArray(v) ? (v[0] ?? null) : v;
}

async function toStoredMessage(raw: Buffer, session: Pick<SMTPServerSession, 'envelope'>, now = new Date()): Promise<StoredMessage> {
  // Only what is stored: not the HTML mailparser makes from the text part (`textAsHtml`, with its
  // link detection: about a third of the parsing time of a reminder), nor image links.
  const parsed = await simpleParser(raw, { skipImageLinks: true, skipTextToHtml: true, skipTextLinks: true });
  const headers = rawHeaders(parsed);
  const mailFrom = session.envelope.mailFrom;
  return {
    id: newId(now),
    receivedAt: now.toISOString(),
    messageId: parsed.messageId ?? null,
    envelope: {
      mailFrom: mailFrom ? mailFrom.address : null,
      rcptTo: session.envelope.rcptTo.map((r: SMTPServerAddress) => r.address.toLowerCase()),
    },
    from: parsed.from?.text ?? '',
    fromAddress: parsed.from?.value[0]?.address?.toLowerCase() ?? null,
    to: addresses(parsed.to),
    cc: addresses(parsed.cc),
    replyTo: parsed.replyTo?.text ?? null,
    subject: parsed.subject ?? '',
    text: parsed.text ?? '',
    html: typeof parsed.html === 'string' ? parsed.html : null,
    headers,
    listUnsubscribe: firstHeader(headers, 'list-unsubscribe'),
    listUnsubscribePost: firstHeader(headers, 'list-unsubscribe-post'),
    attachments: parsed.attachments.map((a) => ({
      filename: a.filename ?? null,
      contentType: a.contentType,
      contentId: a.cid ?? null,
      size: a.size,
      content: a.content.toString('base64'),
    })),
    size: raw.length,
  };
}

// ---------------------------------------------------------------------------------------------
// Message store: one JSON file per message; file names sort by arrival

/** Every address a stored message went to (To, Cc and the envelope), as stored (lower case). */
function recipientsOf(m: StoredMessage): readonly string[] {
  return [...m.to, ...m.cc, ...m.envelope.rcptTo];
}

class Store {
  /**
   * Each stored message's recipients by id, so a lookup by recipient (the worker's delivery check,
   * once per reminder) reads only the matching files, not every file: reading them all made each
   * check cost the whole mailbox, and a run of 2,000 reminders quadratic. The directory stays the
   * truth (an id no longer listed is skipped); this only remembers what a file said.
   */
  private readonly recipients = new Map<string, readonly string[]>();

  constructor(readonly dir: string) {}

  async init() {
    await fs.mkdir(this.dir, { recursive: true });
  }

  /**
   * Written under a temporary name and renamed, so a reader never sees half a file. Synchronously:
   * a small file into the page cache costs less than the thread-pool round trips of three
   * asynchronous calls (open, write and close, then rename), once per message (reminder bench).
   */
  async save(message: StoredMessage) {
    const tmp = path.join(this.dir, `.tmp-${message.id}`);
    writeFileSync(tmp, JSON.stringify(message));
    renameSync(tmp, path.join(this.dir, `${message.id}.json`));
    this.recipients.set(message.id, recipientsOf(message));
  }

  private async ids(): Promise<string[]> {
    const names = await fs.readdir(this.dir);
    return names
      .filter((n) => n.endsWith('.json') && ID_RE.test(n.slice(0, -5)))
      .map((n) => n.slice(0, -5))
      .sort()
      .reverse();
  }

  async count() {
    return (await this.ids()).length;
  }

  async get(id: string): Promise<StoredMessage | null> {
    if (!ID_RE.test(id)) return null;
    try {
      return JSON.parse(await fs.readFile(path.join(this.dir, `${id}.json`), 'utf8')) as StoredMessage;
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code === 'ENOENT') return null;
      throw e;
    }
  }

  async list(filter: { to?: string; limit?: number }): Promise<StoredMessage[]> {
    const out: StoredMessage[] = [];
    const to = filter.to?.toLowerCase();
    for (const id of await this.ids()) {
      let m: StoredMessage | null = null;
      let rcpt = this.recipients.get(id);
      if (!rcpt) {
        m = await this.get(id);
        if (!m) continue;
        rcpt = recipientsOf(m);
        this.recipients.set(id, rcpt);
      }
      if (to && !rcpt.includes(to)) continue;
      m ??= await this.get(id);
      if (!m) continue;
      out.push(m);
      if (filter.limit !== undefined && out.length >= filter.limit) break;
    }
    return out;
  }

  async remove(id: string): Promise<boolean> {
    if (!ID_RE.test(id)) return false;
    try {
      await fs.unlink(path.join(this.dir, `${id}.json`));
      this.recipients.delete(id);
      return true;
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code === 'ENOENT') return false;
      throw e;
    }
  }

  async clear(): Promise<number> {
    const ids = await this.ids();
    await Promise.all(ids.map((id) => fs.rm(path.join(this.dir, `${id}.json`), { force: true })));
    this.recipients.clear();
    return ids.length;
  }
}

// ---------------------------------------------------------------------------------------------
// SMTP side

interface Faults {
  refuse: number;
  hang: number;
}

function smtpError(message: string, responseCode: number): Error {
  return Object.assign(new Error(message), { responseCode });
}

function createSmtpServer(config: Config, store: Store, faults: Faults): SMTPServer {
  return new SMTPServer({
    name: 'lamina-mail-fake',
    banner: 'Lamina local mail fake (messages are stored, never delivered)',
    secure: false,
    authOptional: true,
    disabledCommands: ['AUTH', 'STARTTLS'],
    size: config.maxMessageBytes,
    logger: false,
    onMailFrom(_address, _session, callback) {
      // A transaction starts with MAIL FROM; refusing here is what a greylisting server does.
      if (faults.refuse > 0) {
        faults.refuse -= 1;
        return callback(smtpError('4.3.0 Temporary failure requested through the mail fake control', 451));
      }
      callback();
    },
    onData(stream: SMTPServerDataStream, session: SMTPServerSession, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (c: Buffer) => chunks.push(c));
      stream.on('error', (e: Error) => callback(e));
      stream.on('end', () => {
        if (faults.hang > 0) {
          // The message is read to its end and never answered: the client times out and closes.
          faults.hang -= 1;
          console.log(`mail-fake: leaving a transaction unanswered (${faults.hang} more to hang)`);
          return;
        }
        if (stream.sizeExceeded) return callback(smtpError('5.3.4 Message too big for the mail fake', 552));
        void (async () => {
          try {
            const message = await toStoredMessage(Buffer.concat(chunks), session);
            await store.save(message);
            console.log(`mail-fake: stored ${message.id} to=${message.envelope.rcptTo.join(',')} subject=${JSON.stringify(message.subject)}`);
            callback(null, `Queued as ${message.id}`);
          } catch (e) {
            console.error('mail-fake: could not store a message:', e);
            callback(smtpError('4.3.0 The mail fake could not store the message', 451));
          }
        })();
      });
    },
  });
}

// ---------------------------------------------------------------------------------------------
// HTTP side

const ListQuery = z.object({
  to: z.string().trim().min(1).max(320).optional(),
  limit: z.coerce.number().int().min(1).max(10_000).optional(),
});
const ControlBody = z
  .object({ refuse: z.number().int().min(0).max(10_000).optional(), hang: z.number().int().min(0).max(10_000).optional() })
  .strict()
  .refine((b) => b.refuse !== undefined || b.hang !== undefined);

class HttpError extends Error {
  constructor(
    readonly status: number,
    message: string,
  ) {
    super(message);
  }
}

function send(res: http.ServerResponse, status: number, body: unknown) {
  const text = JSON.stringify(body);
  res.writeHead(status, { 'content-type': 'application/json; charset=utf-8', 'cache-control': 'no-store' });
  res.end(text);
}

async function readJson(req: http.IncomingMessage): Promise<unknown> {
  const chunks: Buffer[] = [];
  let size = 0;
  for await (const chunk of req) {
    size += (chunk as Buffer).length;
    if (size > 64 * 1024) throw new HttpError(413, 'body too large');
    chunks.push(chunk as Buffer);
  }
  try {
    return JSON.parse(Buffer.concat(chunks).toString('utf8') || 'null');
  } catch {
    throw new HttpError(400, 'body is not JSON');
  }
}

/** The request carries the run's secret (compared in constant time). */
function authorised(req: http.IncomingMessage, secret: string): boolean {
  const given = req.headers[MAILBOX_SECRET_HEADER];
  if (typeof given !== 'string') return false;
  const a = crypto.createHash('sha256').update(given).digest();
  const b = crypto.createHash('sha256').update(secret).digest();
  return crypto.timingSafeEqual(a, b);
}

function createHttpServer(config: Config, store: Store, faults: Faults): http.Server {
  async function route(req: http.IncomingMessage, res: http.ServerResponse) {
    const url = new URL(req.url ?? '/', `http://${HOST}`);
    const method = req.method ?? 'GET';
    const parts = url.pathname.split('/').filter(Boolean);
    if (url.pathname !== '/health' && !authorised(req, config.secret)) {
      throw new HttpError(401, `send the run's secret (MAILBOX_SECRET) in the ${MAILBOX_SECRET_HEADER} header`);
    }

    if (url.pathname === '/health' && method === 'GET') {
      return send(res, 200, {
        ok: true,
        pid: process.pid,
        smtpPort: config.smtpPort,
        httpPort: config.httpPort,
        dir: config.dir,
        messages: await store.count(),
        refusing: faults.refuse,
        hanging: faults.hang,
      });
    }
    if (parts[0] === 'messages' && parts.length === 1) {
      if (method === 'GET') {
        const q = ListQuery.safeParse(Object.fromEntries(url.searchParams));
        if (!q.success) throw new HttpError(400, q.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; '));
        return send(res, 200, await store.list(q.data));
      }
      if (method === 'DELETE') return send(res, 200, { deleted: await store.clear() });
      throw new HttpError(405, 'method not allowed');
    }
    if (parts[0] === 'messages' && parts.length === 2) {
      const id = decodeURIComponent(parts[1]!);
      if (method === 'GET') {
        const m = await store.get(id);
        return m ? send(res, 200, m) : send(res, 404, { error: 'no such message' });
      }
      if (method === 'DELETE') return (await store.remove(id)) ? send(res, 200, { deleted: 1 }) : send(res, 404, { error: 'no such message' });
      throw new HttpError(405, 'method not allowed');
    }
    if (url.pathname === '/control') {
      if (method !== 'POST') throw new HttpError(405, 'method not allowed');
      const body = ControlBody.safeParse(await readJson(req));
      if (!body.success) throw new HttpError(400, `expected {"refuse": N} and/or {"hang": N} with 0 <= N <= 10000`);
      if (body.data.refuse !== undefined) faults.refuse = body.data.refuse;
      if (body.data.hang !== undefined) faults.hang = body.data.hang;
      console.log(`mail-fake: refusing the next ${faults.refuse} and leaving unanswered the next ${faults.hang} SMTP transaction(s)`);
      return send(res, 200, { refusing: faults.refuse, hanging: faults.hang });
    }
    throw new HttpError(404, 'not found');
  }

  return http.createServer((req, res) => {
    route(req, res).catch((e: unknown) => {
      if (e instanceof HttpError) return send(res, e.status, { error: e.message });
      console.error('mail-fake: HTTP error:', e);
      send(res, 500, { error: 'internal error' });
    });
  });
}

// ---------------------------------------------------------------------------------------------
// Main

function listen(server: { listen(port: number, host: string, cb: () => void): unknown; once(ev: 'error', cb: (e: Error) => void): unknown }, port: number, what: string) {
  return new Promise<void>((resolve, reject) => {
    server.once('error', (e: Error) => {
      const code = (e as NodeJS.ErrnoException).code;
      reject(new Error(code === 'EADDRINUSE' ? `mail-fake: ${what} port ${HOST}:${port} is already in use` : `mail-fake: ${what}: ${e.message}`));
    });
    server.listen(port, HOST, () => resolve());
  });
}

async function main() {
  const config = readConfig(process.argv.slice(2), process.env);
  const store = new Store(config.dir);
  await store.init();
  const faults: Faults = { refuse: 0, hang: 0 };

  const smtp = createSmtpServer(config, store, faults);
  smtp.on('error', (e) => console.error('mail-fake: SMTP error:', e.message));
  const web = createHttpServer(config, store, faults);

  await listen(smtp.server, config.smtpPort, 'SMTP');
  await listen(web, config.httpPort, 'HTTP');
  if (config.pidFile) await fs.writeFile(config.pidFile, `${process.pid}\n`);
  console.log(`mail-fake: SMTP on ${HOST}:${config.smtpPort}, HTTP on http://${HOST}:${config.httpPort}, storing in ${config.dir}`);

  let stopping = false;
  const stop = (signal: string) => {
    if (stopping) return;
    stopping = true;
    console.log(`mail-fake: ${signal}, stopping`);
    const force = setTimeout(() => process.exit(0), 3000);
    force.unref();
    web.closeAllConnections();
    web.close();
    smtp.close(() => {
      void (async () => {
        if (config.pidFile) await fs.rm(config.pidFile, { force: true });
        process.exit(0);
      })();
    });
  };
  process.on('SIGINT', () => stop('SIGINT'));
  process.on('SIGTERM', () => stop('SIGTERM'));
}

main().catch((e: unknown) => {
  console.error(e instanceof Error ? e.message : e);
  process.exit(1);
});
