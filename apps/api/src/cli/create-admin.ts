/**
 * Creates the first admin:
 *
 *   npm run create-admin -- --email admin@plant.example [--name "Plant Admin"] [--force]
 *   (built image: node apps/api/dist/cli/create-admin.js --email ...)
 *
 * Reads DATABASE_URL from the environment. Prints a generated one-time password once; only its
 * scrypt hash is stored. Refuses when an active admin already exists, unless --force; with --force
 * an existing user of that e-mail is made an active admin with a new password (the way back in when
 * every admin is locked out), and all their sessions are revoked.
 *
 * Plain Node (no Nest), so it runs under tsx from the sources as well as from dist.
 * Exit codes: 0 done, 1 refused or failed, 2 bad arguments or configuration.
 */
import { parseArgs } from 'node:util';
import { ConfigSchema } from '@ausline/contracts';
import { createPrismaClient, type PrismaClient } from '@ausline/db';
import { z } from 'zod';
import { normalizeEmail } from '../auth/auth.service.js';
import { generateOneTimePassword, hashPassword } from '../auth/secrets.js';

export interface CreateAdminOptions {
  email: string;
  displayName?: string;
  force?: boolean;
}

export type CreateAdminResult =
  | { ok: true; action: 'created' | 'reset'; userId: string; email: string; oneTimePassword: string }
  | { ok: false; reason: string };

/** The work, apart from argument parsing and printing (tests call it directly too). */
export async function createAdmin(prisma: PrismaClient, options: CreateAdminOptions): Promise<CreateAdminResult> {
  const email = normalizeEmail(options.email);
  if (!z.email().safeParse(email).success) return { ok: false, reason: `'${options.email}' is not an e-mail address` };

  const admins = await prisma.user.findMany({ where: { active: true, roles: { has: 'ADMIN' } }, select: { email: true } });
  if (admins.length > 0 && !options.force) {
    return {
      ok: false,
      reason: `An active admin already exists (${admins.map((a) => a.email).join(', ')}). Admins create further users with POST /v1/users; use --force only to regain access.`,
    };
  }

  const oneTimePassword = generateOneTimePassword();
  const passwordHash = await hashPassword(oneTimePassword);
  const existing = await prisma.user.findUnique({ where: { email } });
  if (existing) {
    if (!options.force) return { ok: false, reason: `A user with e-mail ${email} already exists; use --force to make them an admin with a new password.` };
    const roles = existing.roles.includes('ADMIN') ? existing.roles : [...existing.roles, 'ADMIN' as const];
    await prisma.$transaction([
      prisma.user.update({ where: { id: existing.id }, data: { passwordHash, roles, active: true } }),
      prisma.session.deleteMany({ where: { userId: existing.id } }),
    ]);
    return { ok: true, action: 'reset', userId: existing.id, email, oneTimePassword };
  }
  const user = await prisma.user.create({
    data: { email, displayName: options.displayName?.trim() || email, roles: ['ADMIN'], passwordHash },
  });
  return { ok: true, action: 'created', userId: user.id, email, oneTimePassword };
}

const USAGE = 'usage: npm run create-admin -- --email <address> [--name "<display name>"] [--force]';

async function main(argv: string[]): Promise<number> {
  let args;
  try {
    args = parseArgs({
      args: argv,
      options: { email: { type: 'string' }, name: { type: 'string' }, force: { type: 'boolean', default: false }, help: { type: 'boolean' } },
      strict: true,
    }).values;
  } catch (error) {
    process.stderr.write(`create-admin: ${error instanceof Error ? error.message : String(error)}\n${USAGE}\n`);
    return 2;
  }
  if (args.help) {
    process.stdout.write(`${USAGE}\n`);
    return 0;
  }
  if (!args.email) {
    process.stderr.write(`create-admin: --email is required\n${USAGE}\n`);
    return 2;
  }
  const databaseUrl = ConfigSchema.shape.DATABASE_URL.safeParse(process.env.DATABASE_URL ?? '');
  if (!databaseUrl.success) {
    process.stderr.write(`create-admin: DATABASE_URL ${process.env.DATABASE_URL ? 'is not a postgresql:// URL' : 'is not set'}\n`);
    return 2;
  }

  const prisma = createPrismaClient(databaseUrl.data, { maxConnections: 1 });
  try {
    const result = await createAdmin(prisma, { email: args.email, displayName: args.name, force: args.force });
    if (!result.ok) {
      process.stderr.write(`create-admin: refused: ${result.reason}\n`);
      return 1;
    }
    process.stdout.write(
      [
        `${result.action === 'created' ? 'Created admin' : 'Reset admin'} ${result.email} (id ${result.userId}).`,
        'One-time password (shown only now; sign in and change it with POST /v1/me/password):',
        `  ${result.oneTimePassword}`,
        '',
      ].join('\n'),
    );
    return 0;
  } catch (error) {
    process.stderr.write(`create-admin: failed: ${error instanceof Error ? error.message : String(error)}\n`);
    return 1;
  } finally {
    await prisma.$disconnect();
  }
}

// Run only as a program, not when a test imports createAdmin.
const invokedPath = process.argv[1] ?? '';
if (/create-admin\.(ts|js)$/.test(invokedPath)) {
  process.exitCode = await main(process.argv.slice(2));
}
