import bcrypt from 'bcryptjs';

/** bcrypt with cost 12 (a common choice for interactive sign-in; OWASP password storage guidance). */
const COST = 12;

export function hashPassword(plain: string): Promise<string> {
  return bcrypt.hash(plain, COST);
}

export function verifyPassword(plain: string, hash: string | null | undefined): Promise<boolean> {
  // Compare against a fixed hash when the user has none, so timing does not reveal which accounts exist.
  return bcrypt.compare(plain, hash ?? DUMMY_HASH);
}

const DUMMY_HASH = '$2b$12$C6UzMDM.H6dfI/f/IKcEeO5vAVZHgRDNl1Lx7/2f0Jk7z9Kqv4E5m';
