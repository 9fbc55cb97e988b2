import { Injectable } from '@nestjs/common';
import type { CreateUserRequest } from '@ausline/contracts';
import type { PrismaClient } from '@ausline/db';
import type { Role } from '../auth/access.js';
import { normalizeEmail, type PublicUser } from '../auth/auth.service.js';
import { generateOneTimePassword, hashPassword } from '../auth/secrets.js';
import { conflict, notFound } from '../http/errors.js';
import { InjectPrisma, isUniqueViolation } from '../prisma.provider.js';

const publicUser = { id: true, email: true, displayName: true, roles: true, active: true, createdAt: true } as const;

export interface CreatedUser {
  user: PublicUser;
  /** Present only when the service chose the password: shown this once, never stored in clear. */
  oneTimePassword?: string;
}

/** Lock key serialising changes to who is an active admin, so the last admin cannot be removed by a race. */
const ADMIN_SET_LOCK = 7_270_731;

@Injectable()
export class UsersService {
  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}

  async create(input: CreateUserRequest): Promise<CreatedUser> {
    const email = normalizeEmail(input.email);
    const oneTimePassword = input.password === undefined ? generateOneTimePassword() : undefined;
    const passwordHash = await hashPassword(input.password ?? oneTimePassword!);
    try {
      const user = await this.prisma.user.create({
        data: { email, displayName: input.displayName, roles: input.roles, passwordHash },
        select: publicUser,
      });
      return { user: asPublic(user), ...(oneTimePassword ? { oneTimePassword } : {}) };
    } catch (error) {
      if (!isUniqueViolation(error)) throw error;
      const existing = await this.prisma.user.findUnique({ where: { email }, select: { id: true } });
      throw conflict(`A user with e-mail ${email} already exists${existing ? ` (id ${existing.id})` : ''}`, [
        { path: 'email', message: 'already in use' },
      ]);
    }
  }

  async list(): Promise<PublicUser[]> {
    const users = await this.prisma.user.findMany({ orderBy: { email: 'asc' }, select: publicUser });
    return users.map(asPublic);
  }

  /**
   * Deactivates a user and revokes their sessions. Repeating it is harmless. The last active admin
   * cannot be deactivated (nobody could manage users and keys any more): 409.
   */
  async deactivate(id: string): Promise<PublicUser> {
    return this.prisma.$transaction(async (tx) => {
      await tx.$executeRaw`SELECT pg_advisory_xact_lock(${ADMIN_SET_LOCK})`;
      const user = await tx.user.findUnique({ where: { id }, select: publicUser });
      if (!user) throw notFound(`No user with id ${id}`);
      if (user.active && user.roles.includes('ADMIN')) {
        const otherAdmins = await tx.user.count({ where: { active: true, roles: { has: 'ADMIN' }, id: { not: id } } });
        if (otherAdmins === 0) throw conflict('This is the last active admin; create or activate another admin first');
      }
      const updated = await tx.user.update({ where: { id }, data: { active: false }, select: publicUser });
      await tx.session.deleteMany({ where: { userId: id } });
      return asPublic(updated);
    });
  }
}

function asPublic(user: { roles: string[] } & Omit<PublicUser, 'roles'>): PublicUser {
  return { ...user, roles: user.roles as Role[] };
}
