# Ausline api and worker image (one image, two commands; see docker-compose.yml).
# Build: docker build -t ausline .    Run: docker compose up --build

# ---- build: install from the lockfile, generate the Prisma client, compile TypeScript ----
FROM node:20-bookworm-slim AS build
WORKDIR /app

# Manifests first, so `npm ci` is cached until dependencies change. Every workspace's package.json must
# be listed here (tests/compose checks it). The root postinstall runs `prisma generate`, which needs the
# schema and prisma.config.ts.
COPY package.json package-lock.json prisma.config.ts tsconfig.base.json tsconfig.json ./
COPY prisma ./prisma
COPY apps/api/package.json apps/api/
COPY apps/worker/package.json apps/worker/
COPY libs/compliance/package.json libs/compliance/
COPY libs/contracts/package.json libs/contracts/
COPY libs/db/package.json libs/db/
COPY libs/metallurgy/package.json libs/metallurgy/
COPY apps/line-sim/package.json apps/line-sim/
RUN npm ci --no-audit --no-fund

COPY apps ./apps
COPY libs ./libs
# The apps' project references build the libs they use; libs/db also carries the migration command;
# apps/line-sim is the demo plant (the compose `sim` service). The dashboard is static files the api
# serves from apps/dashboard/dist (vite is a dev dependency, so build it before the prune).
RUN npm run prisma:generate \
 && npx tsc -b libs/db apps/api apps/worker apps/line-sim \
 && npm run build:dashboard \
 && npm prune --omit=dev --ignore-scripts --no-audit --no-fund

# ---- runtime: compiled code, production dependencies, the SQL migrations ----
FROM node:20-bookworm-slim AS runtime
ENV NODE_ENV=production
WORKDIR /app
COPY --from=build --chown=node:node /app/package.json ./
COPY --from=build --chown=node:node /app/node_modules ./node_modules
COPY --from=build --chown=node:node /app/prisma/migrations ./prisma/migrations
COPY --from=build --chown=node:node /app/libs ./libs
COPY --from=build --chown=node:node /app/apps ./apps
# The demo plant keeps its keys and passwords in /state (a named volume in docker-compose.yml); a new
# named volume takes this directory's owner, so the unprivileged user can write there.
RUN mkdir -p /state && chown node:node /state
USER node
EXPOSE 3000

# Apply pending migrations (idempotent, under Postgres' advisory lock, so several containers may start
# at once), then replace the shell with the api. The worker service overrides the command.
CMD ["sh", "-c", "node libs/db/dist/bin/migrate.js && exec node apps/api/dist/main.js"]
