/**
 * Runs once when the web server starts: the configuration is validated then, so a wrong setting
 * — above all demo mode (LAMINA_DEMO=1) with SMTP_URL pointing at a real relay — stops the
 * server at start instead of at its first request.
 */
export async function register() {
  if (process.env.NEXT_RUNTIME !== 'nodejs') return;
  const { checkConfigurationAtStart } = await import('./lib/startup');
  checkConfigurationAtStart();
}
