import { createHash, randomBytes, scrypt as scryptCallback, timingSafeEqual, type ScryptOptions } from 'node:crypto';

/**
 * Password hashing, session tokens and API key material. Plain node:crypto, no Nest, so the
 * create-admin command uses the same code as the API.
 *
 * Passwords are chosen by people and may be guessable, so they get a slow, memory-hard hash:
 * scrypt with N=2^15, r=8, p=3 (32 MiB per hash, about 0.3 s on one core of the reference machine).
 * That is one of the equivalent minimum settings in the OWASP Password Storage Cheat Sheet
 * (from memory: N=2^17/r=8/p=1, N=2^16/r=8/p=2, N=2^15/r=8/p=3 ...); the lower N keeps memory per
 * concurrent login small. The parameters are stored in every hash, so they can be raised later and
 * old hashes still verify (and are re-hashed at the next login, see passwordNeedsRehash).
 *
 * Session tokens and API key secrets are 32 random bytes (256 bits) made by the server. Guessing one
 * or inverting its SHA-256 is infeasible, so a fast hash is enough there: a slow hash only helps
 * against guessable inputs, and a fast one keeps every controller post cheap to authenticate.
 */

export interface ScryptParams {
  N: number;
  r: number;
  p: number;
}

export const PASSWORD_SCRYPT_PARAMS: ScryptParams = { N: 2 ** 15, r: 8, p: 3 };
const PASSWORD_KEY_BYTES = 64;
const PASSWORD_SALT_BYTES = 16;

function scrypt(password: string, salt: Buffer, keyLength: number, options: ScryptOptions): Promise<Buffer> {
  return new Promise((resolve, reject) => {
    scryptCallback(password.normalize('NFC'), salt, keyLength, options, (error, key) => (error ? reject(error) : resolve(key)));
  });
}

function scryptOptions(params: ScryptParams): ScryptOptions {
  // Node refuses more than 32 MiB by default; scrypt needs 128·N·r bytes, so allow twice that.
  return { N: params.N, r: params.r, p: params.p, maxmem: 256 * params.N * params.r };
}

/** Format: scrypt$N=32768,r=8,p=3$<salt base64>$<key base64>. */
export async function hashPassword(password: string, params: ScryptParams = PASSWORD_SCRYPT_PARAMS): Promise<string> {
  const salt = randomBytes(PASSWORD_SALT_BYTES);
  const key = await scrypt(password, salt, PASSWORD_KEY_BYTES, scryptOptions(params));
  return `scrypt$N=${params.N},r=${params.r},p=${params.p}$${salt.toString('base64')}$${key.toString('base64')}`;
}

interface ParsedHash {
  params: ScryptParams;
  salt: Buffer;
  key: Buffer;
}

function parsePasswordHash(stored: string): ParsedHash | undefined {
  const match = /^scrypt\$N=(\d+),r=(\d+),p=(\d+)\$([A-Za-z0-9+/=]+)\$([A-Za-z0-9+/=]+)$/.exec(stored);
  if (!match) return undefined;
  const [, n, r, p, salt, key] = match;
  const params = { N: Number(n), r: Number(r), p: Number(p) };
  // Refuse absurd parameters from a corrupted row rather than allocate gigabytes.
  if (params.N < 2 || params.N > 2 ** 20 || params.r < 1 || params.r > 32 || params.p < 1 || params.p > 16) return undefined;
  return { params, salt: Buffer.from(salt!, 'base64'), key: Buffer.from(key!, 'base64') };
}

/** Constant-time check of a password against a stored hash; false for a malformed hash. */
export async function verifyPassword(password: string, stored: string): Promise<boolean> {
  const parsed = parsePasswordHash(stored);
  if (!parsed || parsed.key.length === 0) return false;
  const candidate = await scrypt(password, parsed.salt, parsed.key.length, scryptOptions(parsed.params));
  return timingSafeEqual(candidate, parsed.key);
}

/** True when the stored hash used weaker parameters than today's (re-hash it at the next login). */
export function passwordNeedsRehash(stored: string): boolean {
  const parsed = parsePasswordHash(stored);
  if (!parsed) return true;
  const now = PASSWORD_SCRYPT_PARAMS;
  return parsed.params.N * parsed.params.r * parsed.params.p < now.N * now.r * now.p;
}

/**
 * A hash of a password nobody knows, to verify against when the e-mail is unknown: the reply then
 * takes as long as for a known user, so timing does not tell which e-mail addresses exist.
 */
let decoyHash: Promise<string> | undefined;
export function decoyPasswordHash(): Promise<string> {
  decoyHash ??= hashPassword(randomBytes(24).toString('base64url'));
  return decoyHash;
}

/** A readable one-time password (about 120 bits), shown once to an admin. */
export function generateOneTimePassword(): string {
  return randomBytes(15).toString('base64url');
}

export function sha256Hex(text: string): string {
  return createHash('sha256').update(text, 'utf8').digest('hex');
}

export function constantTimeEqualHex(aHex: string, bHex: string): boolean {
  const a = Buffer.from(aHex, 'hex');
  const b = Buffer.from(bHex, 'hex');
  return a.length === b.length && a.length > 0 && timingSafeEqual(a, b);
}

/** A new session bearer token and the hash that is stored in its place. */
export function newSessionToken(): { token: string; tokenHash: string } {
  const token = randomBytes(32).toString('base64url');
  return { token, tokenHash: sha256Hex(token) };
}

export const API_KEY_PREFIX_MARK = 'ak_';

/**
 * A new API key '<prefix>.<secret>'. The prefix (ak_ + 12 hex digits) is public: it is stored in
 * clear to find the key and names the key in logs and audit trails. Only the secret's hash is stored.
 */
export function newApiKey(): { key: string; prefix: string; secretHash: string } {
  const prefix = API_KEY_PREFIX_MARK + randomBytes(6).toString('hex');
  const secret = randomBytes(32).toString('base64url');
  return { key: `${prefix}.${secret}`, prefix, secretHash: sha256Hex(secret) };
}

/** Splits '<prefix>.<secret>'; undefined when the text cannot be a key of ours. */
export function splitApiKey(key: string): { prefix: string; secret: string } | undefined {
  const match = /^(ak_[0-9a-f]{12})\.([A-Za-z0-9_-]{20,100})$/.exec(key.trim());
  if (!match) return undefined;
  return { prefix: match[1]!, secret: match[2]! };
}
