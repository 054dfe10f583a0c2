import type { Metadata } from 'next';
import Link from 'next/link';
import { requireActor } from '@/lib/auth/session';
import { getPracticeSettings } from '@/lib/services/practice-settings';
import { SettingsForm } from './SettingsForm';

export const metadata: Metadata = { title: 'Practice settings' };

export default async function SettingsPage() {
  const { em, actor } = await requireActor('team.manage', '/team/settings');
  const settings = await getPracticeSettings(em, actor);
  return (
    <div className="space-y-6">
      <p className="text-sm">
        <Link href="/team">← Team</Link>
      </p>
      <div>
        <h1 className="text-3xl">Practice settings</h1>
        <p className="mt-1 text-ink-700">How patients reach {settings.name}, how it shows teeth, and when completed cases are recalled.</p>
      </div>
      <SettingsForm initial={settings} />
    </div>
  );
}
