/**
 * The supervisor of `npm start` (scripts/start.sh sets up, then execs this).
 *
 * - Runs the web server (scripts/web-server.mjs: Next behind a plain HTTP server) and the queue worker (jobs/worker.ts) as children,
 *   each in a process group of its own; a child that exits is restarted with a
 *   growing delay (1 s, 2 s, 4 s … 30 s; back to 1 s after a minute of good health).
 * - Watches PostgreSQL, Redis, the mail fake and the S3 fake (daemons started by scripts/lib/services.sh)
 *   and restarts one that stops answering, through the same script.
 * - Prints the URL and the demo sign-ins (the seed's output) once the web server answers.
 * - On Ctrl-C, SIGTERM or SIGHUP stops everything it started: web and worker first, then the
 *   S3 fake, the mail fake, Redis and PostgreSQL (services.sh stop). A second Ctrl-C kills the children at once.
 *
 * Configuration: the LAMINA_* and app variables exported by start.sh (see services.sh).
 */
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import net from 'node:net';
import path from 'node:path';
import readline from 'node:readline';

const repo = path.resolve(import.meta.dirname, '..');
const need = (name: string): string => {
  const v = process.env[name];
  if (!v) {
    console.error(`supervise: ${name} is not set (run through scripts/start.sh)`);
    process.exit(2);
  }
  return v;
};
const data = need('LAMINA_DATA');
const webPort = Number(need('LAMINA_WEB_PORT'));
const pgPort = Number(need('LAMINA_PG_PORT'));
const redisPort = Number(need('LAMINA_REDIS_PORT'));
const mailboxPort = Number(need('LAMINA_MAILBOX_PORT'));
const s3Port = Number(need('LAMINA_S3_PORT'));
const s3Bucket = need('LAMINA_S3_BUCKET');
const appUrl = need('APP_URL');
const runDir = path.join(data, 'run');
const logDir = path.join(data, 'logs');
const servicesScript = path.join(repo, 'scripts/lib/services.sh');

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const say = (msg: string) => console.log(`lamina: ${msg}`);
let stopping = false;

// ---------------------------------------------------------------------------------------------
// Children: web and worker

interface ChildSpec {
  name: string;
  command: string;
  args: string[];
  /** NODE_OPTIONS added to the inherited ones */
  nodeOptions?: string;
}

class Child {
  proc: ChildProcess | null = null;
  private startedAt = 0;
  private delay = 1000;
  private restartTimer: NodeJS.Timeout | null = null;
  private exited: Promise<void> = Promise.resolve();
  private readonly log: fs.WriteStream;
  private readonly pidFile: string;

  constructor(readonly spec: ChildSpec) {
    this.log = fs.createWriteStream(path.join(logDir, `${spec.name}.log`), { flags: 'a' });
    this.pidFile = path.join(runDir, `${spec.name}.pid`);
  }

  start() {
    if (stopping) return;
    const { name, command, args, nodeOptions } = this.spec;
    const env = nodeOptions ? { ...process.env, NODE_OPTIONS: [process.env.NODE_OPTIONS, nodeOptions].filter(Boolean).join(' ') } : process.env;
    // detached: a process group of its own, so Ctrl-C reaches only the supervisor, which then
    // stops children in order; and killing the group also ends any grandchildren.
    const proc = spawn(command, args, { cwd: repo, env, detached: true, stdio: ['ignore', 'pipe', 'pipe'] });
    this.proc = proc;
    this.startedAt = Date.now();
    if (proc.pid) fs.writeFileSync(this.pidFile, `${proc.pid}\n`);
    for (const stream of [proc.stdout, proc.stderr]) {
      if (!stream) continue;
      readline.createInterface({ input: stream }).on('line', (line) => {
        this.log.write(`${line}\n`);
        process.stdout.write(`[${name}] ${line}\n`);
      });
    }
    this.exited = new Promise((resolve) => {
      proc.on('exit', (code, signal) => {
        this.proc = null;
        fs.rmSync(this.pidFile, { force: true });
        resolve();
        if (stopping) return;
        if (Date.now() - this.startedAt > 60_000) this.delay = 1000;
        say(`${name} exited (${signal ?? `code ${code}`}); restarting in ${this.delay / 1000}s (log: ${path.join(logDir, `${name}.log`)})`);
        this.restartTimer = setTimeout(() => this.start(), this.delay);
        this.delay = Math.min(this.delay * 2, 30_000);
      });
    });
    proc.on('error', (e) => say(`${name}: could not start ${command}: ${e.message}`));
  }

  /** SIGTERM the group; SIGKILL after `graceMs`. */
  async stop(graceMs = 10_000) {
    if (this.restartTimer) clearTimeout(this.restartTimer);
    const proc = this.proc;
    if (!proc?.pid) return;
    signalGroup(proc.pid, 'SIGTERM');
    const done = await Promise.race([this.exited.then(() => true), sleep(graceMs).then(() => false)]);
    if (!done) {
      say(`${this.spec.name} did not stop in ${graceMs / 1000}s; killing it`);
      this.kill();
      await Promise.race([this.exited, sleep(2000)]);
    }
    this.log.end();
  }

  kill() {
    if (this.proc?.pid) signalGroup(this.proc.pid, 'SIGKILL');
  }
}

function signalGroup(pid: number, signal: NodeJS.Signals) {
  try {
    process.kill(-pid, signal);
  } catch {
    try {
      process.kill(pid, signal);
    } catch {
      /* already gone */
    }
  }
}

// ---------------------------------------------------------------------------------------------
// Services: health checks and restarts through services.sh

/** Open a TCP connection, write `send`, and hand the first bytes back to `ok`. */
function probe(port: number, send: Buffer, ok: (reply: Buffer) => boolean, timeoutMs = 2000): Promise<boolean> {
  return new Promise((resolve) => {
    const socket = net.connect({ host: '127.0.0.1', port });
    const finish = (v: boolean) => {
      socket.destroy();
      resolve(v);
    };
    socket.setTimeout(timeoutMs, () => finish(false));
    socket.once('error', () => finish(false));
    socket.once('connect', () => socket.write(send));
    socket.once('data', (d) => finish(ok(d)));
  });
}

// PostgreSQL answers an SSLRequest with one byte, 'S' or 'N', before any authentication.
const sslRequest = Buffer.from([0, 0, 0, 8, 0x04, 0xd2, 0x16, 0x2f]);
const pgAlive = () => probe(pgPort, sslRequest, (d) => d[0] === 0x4e || d[0] === 0x53);
const redisAlive = () => probe(redisPort, Buffer.from('PING\r\n'), (d) => d.toString().startsWith('+PONG'));
const mailAlive = async () => {
  try {
    const r = await fetch(`http://127.0.0.1:${mailboxPort}/health`, { signal: AbortSignal.timeout(2000) });
    return r.ok;
  } catch {
    return false;
  }
};

const s3Alive = async () => {
  try {
    const r = await fetch(`http://127.0.0.1:${s3Port}/${s3Bucket}?max-keys=1`, { signal: AbortSignal.timeout(2000) });
    return r.ok;
  } catch {
    return false;
  }
};

function runServices(command: string): Promise<number> {
  return new Promise((resolve) => {
    const p = spawn('bash', [servicesScript, command], { cwd: repo, env: process.env, stdio: ['ignore', 'inherit', 'inherit'] });
    p.on('exit', (code) => resolve(code ?? 1));
    p.on('error', () => resolve(1));
  });
}

interface Service {
  name: string;
  alive: () => Promise<boolean>;
  start: string;
  failures: number;
  nextTry: number;
  delay: number;
}

/** The first wait after a failed restart; doubled after each further failure, up to a minute. */
const SERVICE_RETRY_MS = 2000;
const service = (name: string, alive: () => Promise<boolean>, start: string): Service => ({ name, alive, start, failures: 0, nextTry: 0, delay: SERVICE_RETRY_MS });
const services: Service[] = [service('PostgreSQL', pgAlive, 'pg-start'), service('Redis', redisAlive, 'redis-start'), service('mail fake', mailAlive, 'mail-start'), service('S3 fake', s3Alive, 's3-start')];

let watching: Promise<void> = Promise.resolve();
let watchTimer: NodeJS.Timeout | null = null;

async function watchServices() {
  for (const s of services) {
    if (stopping) return;
    if (await s.alive()) {
      s.failures = 0;
      s.delay = SERVICE_RETRY_MS;
      continue;
    }
    s.failures += 1;
    // Two misses in a row (3 s apart) before acting: a busy server may miss one probe.
    if (s.failures < 2 || Date.now() < s.nextTry) continue;
    say(`${s.name} is not answering; restarting it`);
    const code = await runServices(s.start);
    if (code === 0) {
      say(`${s.name} is back`);
      s.failures = 0;
      s.delay = SERVICE_RETRY_MS;
    } else {
      s.nextTry = Date.now() + s.delay;
      say(`${s.name} did not restart (exit ${code}); trying again in ${s.delay / 1000}s`);
      s.delay = Math.min(s.delay * 2, 60_000);
    }
  }
}

function scheduleWatch() {
  if (stopping) return;
  watchTimer = setTimeout(() => {
    watching = watchServices().finally(scheduleWatch);
  }, 3000);
}

// ---------------------------------------------------------------------------------------------
// Start-up banner

async function webAnswers(): Promise<boolean> {
  try {
    await fetch(`http://127.0.0.1:${webPort}/`, { redirect: 'manual', signal: AbortSignal.timeout(3000) });
    return true;
  } catch {
    return false;
  }
}

async function announce() {
  const deadline = Date.now() + 90_000;
  let up = false;
  while (!stopping && !up && Date.now() < deadline) {
    up = await webAnswers();
    if (!up) await sleep(250);
  }
  if (stopping) return;
  if (!up) {
    say(`the web server is not answering yet; see ${path.join(logDir, 'web.log')}`);
    return;
  }
  const seedFile = process.env.LAMINA_SEED_OUTPUT;
  const seed = seedFile && fs.existsSync(seedFile) ? fs.readFileSync(seedFile, 'utf8').trimEnd() : '';
  const rule = '─'.repeat(64);
  console.log(`\n${rule}\n  Lamina is running at ${appUrl}\n${rule}`);
  if (seed) console.log(`${seed}\n${rule}`);
  if (process.env.LAMINA_DEMO === '1') console.log(`  Demo mode: mail is caught locally; admins read it on the Dev mailbox page (the fake's API at ${process.env.MAILBOX_URL} asks for this run's MAILBOX_SECRET)`);
  console.log(`  Logs: ${logDir}\n  Press Ctrl-C to stop Lamina and its services.\n${rule}\n`);
}

// ---------------------------------------------------------------------------------------------
// Main

const children: Child[] = [
  new Child({
    name: 'web',
    // Next's request handler behind Lamina's own HTTP server (the client's socket address).
    command: process.execPath,
    args: ['scripts/web-server.mjs', '-H', '127.0.0.1', '-p', String(webPort)],
    nodeOptions: process.env.LAMINA_WEB_NODE_OPTIONS, // scripts/lib/services.sh
  }),
  // TSX_TSCONFIG_PATH (exported by start.sh) maps `server-only` to an empty module outside Next.
  new Child({ name: 'worker', command: process.execPath, args: ['--import', 'tsx', 'jobs/worker.ts'] }),
];

const supervisorPid = path.join(runDir, 'supervisor.pid');

async function shutdown(reason: string) {
  if (stopping) {
    say('stopping now');
    for (const c of children) c.kill();
    return;
  }
  stopping = true;
  say(`${reason}: stopping Lamina`);
  if (watchTimer) clearTimeout(watchTimer);
  await watching;
  await Promise.all(children.map((c) => c.stop()));
  await runServices('stop');
  fs.rmSync(supervisorPid, { force: true });
  say('stopped');
  process.exit(0);
}

for (const sig of ['SIGINT', 'SIGTERM', 'SIGHUP'] as const) process.on(sig, () => void shutdown(sig));
process.on('uncaughtException', (e) => {
  console.error('supervise: unexpected error:', e);
  void shutdown('error');
});

fs.mkdirSync(runDir, { recursive: true });
fs.mkdirSync(logDir, { recursive: true });
fs.writeFileSync(supervisorPid, `${process.pid}\n`);
for (const c of children) c.start();
scheduleWatch();
void announce();
