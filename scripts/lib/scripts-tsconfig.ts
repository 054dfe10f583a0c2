/**
 * Scripts that load `server-only` modules (the registry services' row builders) must run under
 * scripts/tsconfig.json, where that guard is an empty module. Started with plain `tsx`, a script
 * calls this first: it runs itself again that way and exits with the child's status.
 */
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const root = path.resolve(import.meta.dirname, '../..');

export async function runUnderScriptsTsconfig(scriptUrl: string): Promise<void> {
  try {
    await import('server-only');
    return; // already under scripts/tsconfig.json
  } catch {
    const tsx = path.join(root, 'node_modules/tsx/dist/cli.mjs');
    const r = spawnSync(
      process.execPath,
      [tsx, '--tsconfig', path.join(root, 'scripts/tsconfig.json'), fileURLToPath(scriptUrl), ...process.argv.slice(2)],
      { stdio: 'inherit', env: process.env },
    );
    process.exit(r.status ?? 1);
  }
}
