import { describe, expect, it } from 'vitest';
import { ALL_PERMISSIONS, can, permissionsOf, PERMISSIONS } from '@/lib/auth/permissions';
import { ROLES, type Role } from '@/lib/auth/roles';
import { navFor } from '@/components/shell/nav';

/**
 * The permission table stated a second time, by hand, as the product intends it. A change to
 * lib/auth/permissions.ts that does not match this table fails here, so access is never
 * widened by accident.
 */
const EXPECTED: Record<Role, string[]> = {
  admin: ['team.read', 'team.manage', 'audit.read', 'mailbox.read'],
  coordinator: ['patient.read', 'patient.write', 'case.import', 'recall.manage', 'film.read', 'film.upload', 'referrer.send'],
  clinician: ['patient.read', 'patient.write', 'case.write', 'case.import', 'review.write', 'outcomes.read', 'outcomes.decide', 'film.read', 'film.upload', 'reading.queue', 'reading.score', 'referrer.send'],
  auditor: ['patient.read', 'outcomes.read', 'film.read', 'reading.queue', 'reading.lead'],
  researcher: ['cohort.export'],
};

describe('permissions', () => {
  for (const role of ROLES) {
    it(`${role} may do exactly what the product intends`, () => {
      expect(permissionsOf([role]).sort()).toEqual([...EXPECTED[role]].sort());
    });
  }

  it('several roles add up', () => {
    expect(can(['coordinator', 'researcher'], 'cohort.export')).toBe(true);
    expect(can(['coordinator', 'researcher'], 'case.write')).toBe(false);
    expect(permissionsOf(['admin', 'clinician']).length).toBe(EXPECTED.admin.length + EXPECTED.clinician.length);
  });

  it('no roles, no permissions', () => {
    for (const p of ALL_PERMISSIONS) expect(can([], p)).toBe(false);
  });

  it('the researcher never reads identifiable patient data; the administrator neither', () => {
    expect(can(['researcher'], 'patient.read')).toBe(false);
    expect(can(['admin'], 'patient.read')).toBe(false);
  });

  it('films are health data: the administrator and the researcher never see one', () => {
    for (const p of ['film.read', 'film.upload'] as const) {
      expect(can(['admin'], p)).toBe(false);
      expect(can(['researcher'], p)).toBe(false);
    }
  });

  it('every permission is granted to someone', () => {
    for (const [p, roles] of Object.entries(PERMISSIONS)) expect(roles.length, p).toBeGreaterThan(0);
  });

  it('navigation shows only areas the role opens', () => {
    for (const role of ROLES) {
      for (const item of navFor([role])) expect(can([role], item.permission)).toBe(true);
    }
    expect(navFor(['admin']).map((i) => i.href)).toContain('/team');
    expect(navFor(['researcher']).map((i) => i.href)).not.toContain('/team');
  });
});
