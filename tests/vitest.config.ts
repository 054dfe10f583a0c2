import { defineConfig } from 'vitest/config';
import path from 'node:path';

const root = path.resolve(import.meta.dirname, '..');

// Two projects: `unit` is pure code (no services); `integration` talks to the real
// PostgreSQL and Redis started by scripts/test.sh and runs its files one at a time.
export default defineConfig({
  root,
  resolve: { alias: { '@': root, 'server-only': path.join(root, 'tests/support/server-only.ts') } },
  test: {
    projects: [
      {
        extends: true,
        // 30 s, not vitest's 5 s: a few pure tests (10,000-row CSV, large sorts, the demo world)
        // take 1–2 s on a quiet machine and timed out at 5 s on a loaded one (issue 15).
        // Not isolated: a worker keeps the modules it loaded for its next file (the pure code has no
        // state to leak), which took the project from 112 to 56 s of CPU, most of it module loading.
        // A file that mocks a module (vi.mock) needs its own module graph: name it *.isolated.test.ts
        // (tests/unit/harness/isolated-mocks.test.ts fails a vi.mock anywhere else).
        test: {
          name: 'unit',
          include: ['tests/unit/**/*.test.ts', 'tests/reference/**/*.test.ts'],
          exclude: ['**/*.isolated.test.ts'],
          isolate: false,
          environment: 'node',
          testTimeout: 30_000,
        },
      },
      {
        extends: true,
        test: { name: 'unit-isolated', include: ['tests/unit/**/*.isolated.test.ts'], environment: 'node', testTimeout: 30_000 },
      },
      {
        extends: true,
        test: {
          name: 'integration',
          include: ['tests/integration/**/*.test.ts'],
          environment: 'node',
          fileParallelism: false,
          testTimeout: 60_000,
          hookTimeout: 120_000,
          globalSetup: ['tests/support/integration-setup.ts'],
        },
      },
    ],
  },
});
