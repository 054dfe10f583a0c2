import { handler, readJson } from '@/lib/http';
import { getPracticeSettings, updatePracticeSettings } from '@/lib/services/practice-settings';

/** GET /api/practice/settings → PracticeSettingsView. */
export const GET = handler('team.read', async ({ em, actor }) => getPracticeSettings(em, actor));

/** PATCH /api/practice/settings { toothNotation?, recallPolicy?, contact?: { address?, phone?, contactEmail? } } → PracticeSettingsView. */
export const PATCH = handler('team.manage', async ({ req, em, actor }) => updatePracticeSettings(em, actor, await readJson(req)));
