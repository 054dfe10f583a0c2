/**
 * What a benchmark reads of the processes it measures (Linux /proc) and of PostgreSQL's statement
 * statistics: shared by the reminders and the load benches.
 */
import fs from 'node:fs';
import path from 'node:path';
import type { Knex } from '@mikro-orm/knex';

/** Peak and current resident memory (kB) of a process; null once it is gone. */
export function vm(pid: number): { hwm: number; rss: number } | null {
  try {
    const status = fs.readFileSync(`/proc/${pid}/status`, 'utf8');
    const kb = (k: string) => Number(new RegExp(`^${k}:\\s+(\\d+) kB`, 'm').exec(status)?.[1] ?? 0);
    return { hwm: kb('VmHWM'), rss: kb('VmRSS') };
  } catch {
    return null;
  }
}

/** The fields of /proc/PID/stat after the command name (field 3, the state, first); null once the process is gone. */
function statFields(pid: number | string): string[] | null {
  try {
    const stat = fs.readFileSync(`/proc/${pid}/stat`, 'utf8');
    return stat.slice(stat.lastIndexOf(')') + 2).split(' ');
  } catch {
    return null;
  }
}

/** CPU time (user + system, ms) of a process so far, from /proc (Linux); null once it is gone. */
function cpuMs(pid: number): number | null {
  const f = statFields(pid);
  return f ? ((Number(f[11]) + Number(f[12])) * 1000) / 100 : null; // clock ticks (USER_HZ 100)
}

/** Children of a process (PostgreSQL's backends under its postmaster). */
export function childrenOf(ppid: number): number[] {
  return fs
    .readdirSync('/proc')
    .filter((name) => /^\d+$/.test(name) && Number(statFields(name)?.[1]) === ppid)
    .map(Number);
}

export const readPid = (file: string): number | null => {
  try {
    return Number(fs.readFileSync(file, 'utf8').split('\n')[0]) || null;
  } catch {
    return null;
  }
};

/** The throwaway services' processes (scripts/lib/services.sh under LAMINA_DATA): PostgreSQL's postmaster and backends, Redis. */
export function serviceGroups(): Record<string, number[]> {
  const data = process.env.LAMINA_DATA;
  const postmaster = data ? readPid(path.join(data, 'pg', 'postmaster.pid')) : null;
  const redis = data ? readPid(path.join(data, 'redis', 'redis.pid')) : null;
  return {
    PostgreSQL: postmaster ? [postmaster, ...childrenOf(postmaster)] : [],
    Redis: redis ? [redis] : [],
  };
}

export type CpuSnapshot = Map<string, Map<number, number>>;

/** CPU ms per process so far, by group. */
export function cpuSnapshot(groups: Record<string, number[]>): CpuSnapshot {
  const out: CpuSnapshot = new Map();
  for (const [group, pids] of Object.entries(groups)) {
    const m = new Map<number, number>();
    for (const pid of pids) {
      const ms = cpuMs(pid);
      if (ms !== null) m.set(pid, ms);
    }
    out.set(group, m);
  }
  return out;
}

/** CPU ms used between two snapshots, per group (a process that appeared in between counts from 0; one that exited is lost). */
export function cpuBetween(a: CpuSnapshot, b: CpuSnapshot): [string, number][] {
  return [...b].map(([group, pids]) => [group, [...pids].reduce((sum, [pid, ms]) => sum + ms - (a.get(group)?.get(pid) ?? 0), 0)]);
}

export type Statements = Map<string, { calls: number; ms: number; rows: number; query: string }>;

/**
 * BENCH_PG_STATEMENTS=1 (with LAMINA_PG_OPTS='-c shared_preload_libraries=pg_stat_statements'): a
 * bench prints the statements PostgreSQL spent its measured time on.
 */
export const statementsWanted = process.env.BENCH_PG_STATEMENTS === '1';

/** pg_stat_statements of this database (LAMINA_PG_OPTS='-c shared_preload_libraries=pg_stat_statements'; scripts/bench.sh creates the extension). */
export async function readStatements(knex: Knex): Promise<Statements> {
  const rows = (await knex.raw(
    `select queryid::text as id, calls, total_exec_time as ms, rows, regexp_replace(left(query, 150), '\\s+', ' ', 'g') as query
       from pg_stat_statements where dbid = (select oid from pg_database where datname = current_database())`,
  )) as { rows: { id: string; calls: string; ms: number; rows: string; query: string }[] };
  return new Map(rows.rows.map((r) => [r.id, { calls: Number(r.calls), ms: r.ms, rows: Number(r.rows), query: r.query }]));
}

/** The `limit` statements that took the most time between two readings (nested ones included: track=all). */
export function topStatements(a: Statements, b: Statements, limit = 15): string {
  const d = [...b].map(([id, s]) => ({ ...s, calls: s.calls - (a.get(id)?.calls ?? 0), ms: s.ms - (a.get(id)?.ms ?? 0), rows: s.rows - (a.get(id)?.rows ?? 0) }));
  return d
    .filter((s) => s.calls > 0)
    .sort((x, y) => y.ms - x.ms)
    .slice(0, limit)
    .map((s) => `${s.ms.toFixed(0).padStart(7)} ms ${String(s.calls).padStart(7)} calls ${(s.ms / s.calls).toFixed(3).padStart(8)} ms/call ${String(s.rows).padStart(8)} rows  ${s.query}`)
    .join('\n');
}
