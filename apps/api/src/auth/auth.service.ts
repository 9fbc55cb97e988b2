import { Injectable, type OnApplicationShutdown, type OnModuleInit } from '@nestjs/common';
import type { PrismaClient } from '@ausline/db';
import { InjectApiConfig, type ApiConfig } from '../app-config.js';
import { unauthorized } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';
import type { Principal, Role } from './access.js';
import { ApiKeyCache } from './api-key-cache.js';
import {
  constantTimeEqualHex,
  decoyPasswordHash,
  hashPassword,
  newSessionToken,
  passwordNeedsRehash,
  sha256Hex,
  splitApiKey,
  verifyPassword,
} from './secrets.js';

export interface PublicUser {
  id: string;
  email: string;
  displayName: string;
  roles: Role[];
  active: boolean;
  createdAt: Date;
}

export interface IssuedSession {
  token: string;
  tokenType: 'Bearer';
  expiresAt: Date;
  user: PublicUser;
}

/** E-mail addresses are compared case-insensitively: stored and looked up lower-cased. */
export function normalizeEmail(email: string): string {
  return email.trim().toLowerCase();
}

const userSelect = { id: true, email: true, displayName: true, roles: true, active: true, createdAt: true } as const;

/**
 * Sign-in, sessions and API key checks. Sessions are random bearer tokens stored as SHA-256 with a
 * fixed expiry (SESSION_TTL_MIN after login); logout deletes the row, so a revoked token is unknown
 * from then on. Error messages never say whether an e-mail address exists.
 */
@Injectable()
export class AuthService implements OnModuleInit, OnApplicationShutdown {
  /** Principals of keys that authenticated, forgotten on every change to a key (see ApiKeyCache). */
  private readonly apiKeys: ApiKeyCache;

  constructor(
    @InjectPrisma() private readonly prisma: PrismaClient,
    @InjectApiConfig() private readonly config: ApiConfig,
  ) {
    this.apiKeys = new ApiKeyCache(config.DATABASE_URL, config.LOG_LEVEL);
  }

  onModuleInit(): void {
    // In the background: the api starts (and looks keys up uncached) even while Postgres is unreachable.
    void this.apiKeys.start();
  }

  async onApplicationShutdown(): Promise<void> {
    await this.apiKeys.stop();
  }

  async login(email: string, password: string): Promise<IssuedSession> {
    const user = await this.prisma.user.findUnique({ where: { email: normalizeEmail(email) } });
    // Verify against a decoy when the user is unknown, so both cases take the same time.
    const ok = await verifyPassword(password, user?.passwordHash ?? (await decoyPasswordHash()));
    if (!user || !ok || !user.active) throw unauthorized('E-mail or password is wrong, or the account is deactivated');

    if (passwordNeedsRehash(user.passwordHash)) {
      await this.prisma.user.update({ where: { id: user.id }, data: { passwordHash: await hashPassword(password) } });
    }
    // Housekeeping: this user's expired sessions go when they sign in again.
    await this.prisma.session.deleteMany({ where: { userId: user.id, expiresAt: { lt: new Date() } } });
    const { token, expiresAt } = await this.createSession(user.id);
    const { passwordHash: _hash, updatedAt: _updated, ...rest } = user;
    return { token, tokenType: 'Bearer', expiresAt, user: rest as PublicUser };
  }

  /**
   * A new session for a user without a password check: login uses it after checking, and tests use
   * it to get a bearer token without paying for scrypt.
   */
  async createSession(userId: string): Promise<{ token: string; expiresAt: Date }> {
    const { token, tokenHash } = newSessionToken();
    const expiresAt = new Date(Date.now() + this.config.SESSION_TTL_MIN * 60_000);
    await this.prisma.session.create({ data: { userId, tokenHash, expiresAt } });
    return { token, expiresAt };
  }

  /** Revokes a session; true when it still existed. */
  async logout(sessionId: string): Promise<boolean> {
    const { count } = await this.prisma.session.deleteMany({ where: { id: sessionId } });
    return count > 0;
  }

  /** The user behind a bearer token, or undefined when it is unknown, expired or the user is deactivated. */
  async authenticateSession(token: string): Promise<Principal | undefined> {
    if (token.length < 16 || token.length > 200) return undefined;
    const session = await this.prisma.session.findUnique({
      where: { tokenHash: sha256Hex(token) },
      include: { user: { select: userSelect } },
    });
    if (!session) return undefined;
    if (session.expiresAt.getTime() <= Date.now()) {
      await this.prisma.session.deleteMany({ where: { id: session.id } });
      return undefined;
    }
    if (!session.user.active) return undefined;
    return {
      kind: 'user',
      userId: session.user.id,
      email: session.user.email,
      roles: session.user.roles as Role[],
      sessionId: session.id,
    };
  }

  /** The key behind '<prefix>.<secret>', or undefined when malformed, unknown, wrong or revoked. */
  async authenticateApiKey(key: string): Promise<Principal | undefined> {
    const parts = splitApiKey(key);
    if (!parts) return undefined;
    // Cached by a digest of the whole key, so only the exact key that authenticated ever hits.
    return this.apiKeys.get(sha256Hex(key), () => this.lookUpApiKey(parts));
  }

  private async lookUpApiKey(parts: { prefix: string; secret: string }): Promise<Principal | undefined> {
    const row = await this.prisma.apiKey.findUnique({
      where: { prefix: parts.prefix },
      include: { equipment: { select: { equipmentId: true } } },
    });
    if (!row || row.revokedAt !== null) return undefined;
    if (!constantTimeEqualHex(sha256Hex(parts.secret), row.secretHash)) return undefined;
    return {
      kind: 'apiKey',
      keyId: row.id,
      prefix: row.prefix,
      scope: row.scope,
      equipmentIds: row.equipment.map((e) => e.equipmentId),
    };
  }

  async currentUser(userId: string): Promise<PublicUser> {
    const user = await this.prisma.user.findUnique({ where: { id: userId }, select: userSelect });
    if (!user) throw unauthorized('The signed-in user no longer exists');
    return { ...user, roles: user.roles as Role[] };
  }

  /**
   * Changes the caller's password after checking the current one; every other session of the user
   * is revoked (the one in use stays valid).
   */
  async changePassword(userId: string, currentSessionId: string, currentPassword: string, newPassword: string): Promise<void> {
    const user = await this.prisma.user.findUnique({ where: { id: userId } });
    if (!user || !(await verifyPassword(currentPassword, user.passwordHash))) {
      throw unauthorized('The current password is wrong');
    }
    const passwordHash = await hashPassword(newPassword);
    await this.prisma.$transaction([
      this.prisma.user.update({ where: { id: userId }, data: { passwordHash } }),
      this.prisma.session.deleteMany({ where: { userId, id: { not: currentSessionId } } }),
    ]);
  }
}
