/**
 * Runs once when the web server starts: the configuration is validated then, so a wrong setting
 * — above all demo mode (LAMINA_DEMO=1) with SMTP_URL pointing at a real relay — stops the
 * server at start instead of at its first request. Then the outcomes area's warmer starts.
 */
export async function register() {
  if (process.env.NEXT_RUNTIME !== 'nodejs') return;
  const { checkConfigurationAtStart } = await import('./lib/startup');
  checkConfigurationAtStart();
  if (process.env.NEXT_PHASE === 'phase-production-build') return;
  // the outcomes area's rows read and kept up to date in the background (lib/services/outcomes-warm.ts)
  const { startOutcomesWarming } = await import('./lib/services/outcomes-warm');
  startOutcomesWarming();
}
