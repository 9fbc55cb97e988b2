import { createHash, scryptSync } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import {
  constantTimeEqualHex,
  hashPassword,
  newApiKey,
  newSessionToken,
  passwordNeedsRehash,
  PASSWORD_SCRYPT_PARAMS,
  splitApiKey,
  verifyPassword,
} from './secrets.js';

describe('password hashing', () => {
  it('stores parameters, salt and key, verifies the right password and rejects others', async () => {
    const stored = await hashPassword('correct horse battery staple');
    expect(stored).toMatch(/^scrypt\$N=32768,r=8,p=3\$/);
    expect(await verifyPassword('correct horse battery staple', stored)).toBe(true);
    expect(await verifyPassword('correct horse battery stapl', stored)).toBe(false);
    expect(await verifyPassword('', stored)).toBe(false);
  });

  it('salts every hash', async () => {
    expect(await hashPassword('same')).not.toBe(await hashPassword('same'));
  });

  it('is scrypt as Node computes it (an independent recomputation from the stored salt)', async () => {
    const stored = await hashPassword('pw-123456789012');
    const [, , saltB64, keyB64] = stored.split('$');
    const { N, r, p } = PASSWORD_SCRYPT_PARAMS;
    const expected = scryptSync('pw-123456789012', Buffer.from(saltB64!, 'base64'), 64, { N, r, p, maxmem: 256 * N * r });
    expect(Buffer.from(keyB64!, 'base64').equals(expected)).toBe(true);
  });

  it('verifies hashes made with older (weaker) parameters and flags them for re-hashing', async () => {
    const old = await hashPassword('legacy-password', { N: 2 ** 10, r: 8, p: 1 });
    expect(await verifyPassword('legacy-password', old)).toBe(true);
    expect(passwordNeedsRehash(old)).toBe(true);
    expect(passwordNeedsRehash(await hashPassword('x'))).toBe(false);
  });

  it('treats malformed or absurd stored hashes as a failed check, not a crash', async () => {
    for (const stored of ['', 'plain', 'scrypt$N=0,r=8,p=1$AA==$AA==', `scrypt$N=${2 ** 30},r=8,p=1$AA==$AA==`, 'bcrypt$2b$...']) {
      expect(await verifyPassword('x', stored)).toBe(false);
    }
  });
});

describe('tokens and keys', () => {
  it('session tokens are 256-bit random and stored as their SHA-256', () => {
    const a = newSessionToken();
    const b = newSessionToken();
    expect(a.token).not.toBe(b.token);
    expect(Buffer.from(a.token, 'base64url')).toHaveLength(32);
    expect(a.tokenHash).toBe(createHash('sha256').update(a.token).digest('hex'));
  });

  it('API keys are <prefix>.<secret>, the hash covers only the secret, and split back', () => {
    const { key, prefix, secretHash } = newApiKey();
    expect(key).toMatch(/^ak_[0-9a-f]{12}\.[A-Za-z0-9_-]{43}$/);
    const parts = splitApiKey(key)!;
    expect(parts.prefix).toBe(prefix);
    expect(createHash('sha256').update(parts.secret).digest('hex')).toBe(secretHash);
    expect(splitApiKey('ak_123.short')).toBeUndefined();
    expect(splitApiKey('not a key')).toBeUndefined();
    expect(splitApiKey(`${prefix}.${'x'.repeat(43)}.extra`)).toBeUndefined();
  });

  it('compares hex digests in constant time and never matches different lengths or empty input', () => {
    expect(constantTimeEqualHex('abcd', 'abcd')).toBe(true);
    expect(constantTimeEqualHex('abcd', 'abce')).toBe(false);
    expect(constantTimeEqualHex('abcd', 'abcdef')).toBe(false);
    expect(constantTimeEqualHex('', '')).toBe(false);
  });
});
