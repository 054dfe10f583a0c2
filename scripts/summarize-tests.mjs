#!/usr/bin/env node
// Usage: node scripts/summarize-tests.mjs MANIFEST
// Prints each runner's counts and failures, then, as the very last line,
// `tests: N passed, N failed`. Exits 1 if anything failed. See scripts/lib/test-summary.mjs.
import fs from 'node:fs';
import { parseManifest, summarize, formatSummary } from './lib/test-summary.mjs';

const manifest = process.argv[2];
if (!manifest) {
  console.error('usage: node scripts/summarize-tests.mjs MANIFEST');
  process.exit(2);
}

let entries;
try {
  entries = parseManifest(fs.existsSync(manifest) ? fs.readFileSync(manifest, 'utf8') : '');
} catch (e) {
  console.error(`summarize-tests: ${e.message}`);
  entries = [{ kind: 'step', name: 'read the test manifest', exitCode: 1 }];
}
const summary = summarize(entries, (file) => fs.readFileSync(file, 'utf8'), process.cwd());
console.log(formatSummary(summary));
process.exit(summary.failed > 0 ? 1 : 0);
