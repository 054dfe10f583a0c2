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
        test: { name: 'unit', include: ['tests/unit/**/*.test.ts', 'tests/reference/**/*.test.ts'], environment: 'node' },
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
