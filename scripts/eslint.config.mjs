// ESLint with Next's own rules (core web vitals + TypeScript). It lives under scripts/ because
// the repository's top level is fixed; `npm run lint` passes it with -c (paths are from the repo root).
import nextVitals from 'eslint-config-next/core-web-vitals';
import nextTs from 'eslint-config-next/typescript';

const config = [
  ...nextVitals,
  ...nextTs,
  {
    ignores: ['node_modules/**', '.next/**', '.next-*/**', '.data/**', 'test-results/**', 'migrations/.snapshot-*.json', 'next-env.d.ts'],
  },
  {
    rules: {
      // Informational only: Lamina does not turn on the React Compiler, and TanStack Table is the
      // table library the product card chose.
      'react-hooks/incompatible-library': 'off',
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
    },
  },
];

export default config;
