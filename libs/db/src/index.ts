export { createPrismaClient, type PrismaClientOptions } from './client.js';
// Generated client, model types, enums and the Prisma namespace (Prisma.JsonValue, Prisma.BatchWhereInput ...).
export * from './generated/prisma/client.js';
