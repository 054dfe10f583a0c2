import 'server-only';
import { parseEnv } from '@/lib/env';

/** Validates the configuration (lib/env.ts) when the server starts; exits with its message if it is wrong. */
export function checkConfigurationAtStart() {
  if (process.env.NEXT_PHASE === 'phase-production-build') return;
  try {
    parseEnv(process.env);
  } catch (e) {
    console.error(e instanceof Error ? e.message : e);
    process.exit(1);
  }
}
