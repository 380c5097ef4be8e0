/**
 * Password hashing with node's scrypt (RFC 7914). The stored form is self-describing,
 * `scrypt$N$r$p$salt$hash` (salt and hash base64url), so the cost can be raised later without
 * breaking existing hashes. N = 2^15, r = 8, p = 1 follow the interactive-login figures of RFC 7914
 * section 2 / common practice; memory 128 N r = 32 MiB.
 */
import { randomBytes, scrypt, timingSafeEqual } from 'node:crypto';

const N = 2 ** 15;
const R = 8;
const P = 1;
const KEY_LENGTH = 32;

function scryptAsync(password: string, salt: Buffer, n: number, r: number, p: number): Promise<Buffer> {
  return new Promise((resolve, reject) => {
    // maxmem: scrypt needs 128 N r bytes; allow twice that.
    scrypt(password, salt, KEY_LENGTH, { N: n, r, p, maxmem: 256 * n * r }, (error, key) => {
      if (error !== null) reject(error);
      else resolve(key);
    });
  });
}

export async function hashPassword(password: string): Promise<string> {
  const salt = randomBytes(16);
  const key = await scryptAsync(password, salt, N, R, P);
  return `scrypt$${N}$${R}$${P}$${salt.toString('base64url')}$${key.toString('base64url')}`;
}

/** Constant-time check of a password against a stored hash; false for any malformed hash. */
export async function verifyPassword(password: string, stored: string): Promise<boolean> {
  const parts = stored.split('$');
  if (parts.length !== 6 || parts[0] !== 'scrypt') return false;
  const n = Number(parts[1]);
  const r = Number(parts[2]);
  const p = Number(parts[3]);
  if (!(Number.isInteger(n) && Number.isInteger(r) && Number.isInteger(p))) return false;
  const salt = Buffer.from(parts[4] ?? '', 'base64url');
  const expected = Buffer.from(parts[5] ?? '', 'base64url');
  if (expected.length !== KEY_LENGTH) return false;
  const key = await scryptAsync(password, salt, n, r, p);
  return timingSafeEqual(key, expected);
}
