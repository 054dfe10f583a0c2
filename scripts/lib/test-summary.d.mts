// Types for scripts/lib/test-summary.mjs (plain Node so that `npm test` can sum results even
// when the TypeScript tool chain is what broke).

export type ManifestEntry =
  | { kind: 'expect'; name: string }
  | { kind: 'runner'; name: string; exitCode: number | null; file: string }
  | { kind: 'step'; name: string; exitCode: number | null };

export interface RunnerCounts {
  passed: number;
  failed: number;
  skipped: number;
  /** Names of the failed tests (or files, or errors outside any test). */
  failures: string[];
  /** Beside each failure, the first line of its message (cut short), or '' when there is none. */
  reasons?: string[];
  /** Why a result was counted as a failure beyond the tests themselves. */
  notes: string[];
}

export interface RunnerSummary extends RunnerCounts {
  name: string;
  exitCode: number | null;
}

export interface Summary {
  runners: RunnerSummary[];
  problems: string[];
  passed: number;
  failed: number;
}

export function parseManifest(text: string): ManifestEntry[];
export function detectKind(report: unknown): 'vitest' | 'playwright' | null;
export function countVitest(report: unknown, cwd?: string): RunnerCounts;
export function countPlaywright(report: unknown): RunnerCounts;
export function summarize(entries: ManifestEntry[], readFile: (file: string) => string, cwd?: string): Summary;
export function formatSummary(summary: Summary): string;
