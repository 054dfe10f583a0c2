import { describe, expect, it } from 'vitest';
import { claimOf } from '@/jobs/outbox-send';

// The lease rule of jobs/send-reminder.ts (Lamina's own): a row `sending` under a live claim waits
// until the claim runs out (+50 ms); one whose claim expired is claimed again as uncertain.
const now = new Date('2026-12-02T10:00:00.000Z');

describe('claimOf: what a row found before the claim means', () => {
  it.each([
    ['queued', null, { uncertain: false }],
    ['queued', '2026-12-02T10:00:30.000Z', { uncertain: false }],
    ['sending', '2026-12-02T10:00:30.000Z', { wait: 30_050 }],
    ['sending', '2026-12-02T10:00:00.001Z', { wait: 51 }],
    ['sending', '2026-12-02T10:00:00.000Z', { uncertain: true }],
    ['sending', '2026-12-02T09:59:00.000Z', { uncertain: true }],
    ['sending', null, { uncertain: true }],
  ] as const)('%s with claim until %s → %o', (status, claim_expires_at, expected) => {
    expect(claimOf({ status, claim_expires_at }, now)).toEqual(expected);
  });
});
