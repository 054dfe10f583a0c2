import { describe, expect, it } from 'vitest';
import { deriveUploadLinkSecret, initialsOf, isWellFormedToken, linkState, tokenHash, uploadToken } from '@/lib/referrers/upload-token';
import { deriveLinkSecret } from '@/lib/recall/reply-token';
import { letterContent, nextStepText, signsText } from '@/lib/referrers/letter';

const key = deriveUploadLinkSecret('x'.repeat(40));
const id = '3f2b1c8e-8d1a-4c55-9a51-2f0c6b1d7e90';

describe('referrer upload tokens (lib/referrers/upload-token.ts)', () => {
  it('is the same for the same link, different per link and per key, and 43 base64url characters', () => {
    expect(uploadToken(id, key)).toBe(uploadToken(id, key));
    expect(uploadToken(id, key)).not.toBe(uploadToken(id.replace('3f', '4f'), key));
    expect(uploadToken(id, key)).not.toBe(uploadToken(id, deriveUploadLinkSecret('y'.repeat(40))));
    // another purpose's key (patient links) never yields the same token
    expect(uploadToken(id, key)).not.toBe(uploadToken(id, deriveLinkSecret('x'.repeat(40))));
    expect(isWellFormedToken(uploadToken(id, key))).toBe(true);
    for (const bad of ['', 'short', `${uploadToken(id, key)}x`, 'a'.repeat(42) + '!', 42, null]) expect(isWellFormedToken(bad)).toBe(false);
  });

  it('stores a SHA-256 hex of the token, never the token', () => {
    const t = uploadToken(id, key);
    expect(tokenHash(t)).toMatch(/^[0-9a-f]{64}$/);
    expect(tokenHash(t)).not.toContain(t);
  });

  it('is open until used or expired (refused from the expiry instant on)', () => {
    const expiresAt = new Date('2026-12-02T12:00:00Z');
    expect(linkState({ usedAt: null, expiresAt }, new Date('2026-12-02T11:59:59Z'))).toBe('open');
    expect(linkState({ usedAt: null, expiresAt }, expiresAt)).toBe('expired');
    expect(linkState({ usedAt: new Date('2026-12-01T00:00:00Z'), expiresAt }, new Date('2026-12-01T01:00:00Z'))).toBe('used');
  });

  it('shows initials only', () => {
    expect(initialsOf('wren', 'Ashdown')).toBe('W. A.');
    expect(initialsOf(' Éva ', 'ørsted')).toBe('É. Ø.');
    expect(initialsOf('', 'Ashdown')).toBe('A.');
  });
});

describe('the outcome letter’s words (lib/referrers/letter.ts)', () => {
  const facts = {
    practiceName: 'Alder Endodontics',
    practiceContact: ['1 Alder Row'],
    referrerName: 'Dr Holm',
    patientName: 'Wren Ashdown',
    patientBirthDate: '1971-04-12',
    tooth: 36,
    kindLabel: 'Primary treatment',
    completionDate: '2024-01-24',
    clinicianName: 'Dr Cal',
    review: { date: '2025-01-20', toothStatus: 'present' as const, paiScore: 3, lesionDiameterMm: 2.5, signs: { tenderToPercussion: true, painOnBiting: false }, otherFindings: null, outcome: 'uncertain' as const },
    decision: null,
    nextRecall: { milestone: 24, dueDate: '2026-01-24' },
    thumbnail: null,
    dated: '2 Dec 2026',
  };

  it('names the tooth, findings, outcome, the caution and the next step', () => {
    const c = letterContent(facts);
    expect(c.title).toBe('Follow-up of tooth 36');
    expect(c.findings).toContainEqual(['Periapical index (PAI)', '3 of 5']);
    expect(c.findings).toContainEqual(['Signs and symptoms', 'Tender to percussion']);
    expect(c.outcome).toBe('Uncertain');
    expect(c.caution).toMatch(/does not diagnose/);
    expect(c.caution).toMatch(/licensed practice/);
    expect(c.nextStep).toBe('The next follow-up review is the 24-month recall, due 24 Jan 2026.');
  });

  it('prefers a recorded decision as the next step; says when signs were not recorded', () => {
    expect(nextStepText({ decision: { step: 'retreat', date: '2026-02-01', note: null }, nextRecall: facts.nextRecall })).toBe('Retreat: planned for 1 Feb 2026.');
    expect(nextStepText({ decision: null, nextRecall: null })).toBe('No further follow-up review is planned.');
    expect(signsText({})).toBe('Not recorded');
    expect(signsText({ swelling: false })).toBe('None of the recorded signs or symptoms');
  });
});
