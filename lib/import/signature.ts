/**
 * The signature of a file layout: a SHA-256 of its normalised headers in order, so that a saved
 * mapping is proposed again for the next file with the same columns ("Patient No." and
 * "patient no" are the same layout).
 */
import { createHash } from 'node:crypto';
import { normaliseHeader } from './mapping';

export function headerSignature(headers: readonly string[]): string {
  return createHash('sha256').update(headers.map(normaliseHeader).join('\u0001')).digest('hex');
}
