import { ANY_ROLE, type AccessRule } from './access.js';

/**
 * Who may call what: the one list of every HTTP route the API serves. tests/auth-matrix.test.ts
 *   1. enumerates the routes registered in the running app and fails when one is missing here, or
 *      when an entry here matches no route;
 *   2. checks that each entry's `access` equals the handler's @Access declaration;
 *   3. calls every endpoint as anonymous, each role, an EQUIPMENT key scoped to the equipment in the
 *      path, one scoped elsewhere, and a LAB key, and asserts allowed / 401 / 403 as `access` says.
 *
 * Adding an endpoint: put @Access on the handler and add a line here with the same rule, `path` as
 * Express registers it (version prefix included, ':param' placeholders). "Allowed" in the test means
 * the guard let the call through: the status is neither 401 nor 403 and below 500 (the test sends
 * an empty JSON body and random UUIDs for path parameters, so 400/404 are expected answers).
 * An endpoint that answers with a stream sets `stream: true` (the test reads only the status).
 */

export type HttpMethod = 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE';

export interface EndpointEntry {
  method: HttpMethod;
  path: string;
  access: AccessRule;
  stream?: true;
}

const ADMIN: AccessRule = { roles: ['ADMIN'] };
const SIGNED_IN: AccessRule = { roles: ANY_ROLE };
const PUBLIC: AccessRule = { public: true };
const QUALITY: AccessRule = { roles: ['QUALITY'] };
/** Heats and lab results: a lab's key, or a quality/metallurgy user typing them in (lab technicians and shift
 *  staff sign in as metallurgists; why data entry is wider than the decisions: DEVELOPERS.md, "Roles"). */
const LAB_WRITERS: AccessRule = { keys: 'LAB', roles: ['QUALITY', 'METALLURGIST'] };

export const ENDPOINT_MATRIX: readonly EndpointEntry[] = [
  // --- operations (F2) -------------------------------------------------------------------------
  { method: 'GET', path: '/health/live', access: PUBLIC },
  { method: 'GET', path: '/health/ready', access: PUBLIC },
  { method: 'GET', path: '/metrics', access: PUBLIC },

  // --- sign-in (F2) ----------------------------------------------------------------------------
  { method: 'POST', path: '/v1/auth/login', access: PUBLIC },
  { method: 'POST', path: '/v1/auth/logout', access: SIGNED_IN },
  { method: 'GET', path: '/v1/me', access: { roles: ANY_ROLE, keys: ['EQUIPMENT', 'LAB'] } },
  { method: 'POST', path: '/v1/me/password', access: SIGNED_IN },

  // --- plant structure (F2): admins change it, everyone signed in reads it ------------------------
  { method: 'POST', path: '/v1/lines', access: ADMIN },
  { method: 'GET', path: '/v1/lines', access: SIGNED_IN },
  { method: 'GET', path: '/v1/lines/:id', access: SIGNED_IN },
  { method: 'POST', path: '/v1/lines/:id/equipment', access: ADMIN },
  { method: 'GET', path: '/v1/lines/:id/equipment', access: SIGNED_IN },
  { method: 'GET', path: '/v1/equipment/:id', access: { roles: ANY_ROLE, keys: 'EQUIPMENT', equipmentParam: 'id' } },
  { method: 'POST', path: '/v1/equipment/:id/channels', access: ADMIN },
  { method: 'GET', path: '/v1/equipment/:id/channels', access: { roles: ANY_ROLE, keys: 'EQUIPMENT', equipmentParam: 'id' } },

  // --- users and API keys (F2) -----------------------------------------------------------------
  { method: 'POST', path: '/v1/users', access: ADMIN },
  { method: 'GET', path: '/v1/users', access: ADMIN },
  { method: 'POST', path: '/v1/users/:id/deactivate', access: ADMIN },
  { method: 'POST', path: '/v1/api-keys', access: ADMIN },
  { method: 'GET', path: '/v1/api-keys', access: ADMIN },
  { method: 'POST', path: '/v1/api-keys/:id/revoke', access: ADMIN },

  // --- ingest and queries (F4) add their endpoints below -----------------------------------------
  // Heats: labs (LAB key) and QUALITY/METALLURGIST users write; everyone signed in reads.
  { method: 'POST', path: '/v1/heats', access: LAB_WRITERS },
  { method: 'POST', path: '/v1/heats/import', access: LAB_WRITERS },
  { method: 'GET', path: '/v1/heats', access: SIGNED_IN },
  { method: 'GET', path: '/v1/heats/:id', access: SIGNED_IN },
  // Product specs: QUALITY creates, drafts and approves; everyone signed in reads.
  { method: 'POST', path: '/v1/specs', access: QUALITY },
  { method: 'POST', path: '/v1/specs/:id/versions', access: QUALITY },
  { method: 'POST', path: '/v1/specs/:id/versions/:version/approve', access: QUALITY },
  { method: 'GET', path: '/v1/specs', access: SIGNED_IN },
  { method: 'GET', path: '/v1/specs/:id', access: SIGNED_IN },
  // Batches: created by ADMIN/METALLURGIST or a controller key (the service checks it is scoped to a
  // furnace of the batch's line); events by controller keys (the service checks the reporting
  // equipment); lab results by labs.
  { method: 'POST', path: '/v1/batches', access: { roles: ['ADMIN', 'METALLURGIST'], keys: 'EQUIPMENT' } },
  { method: 'GET', path: '/v1/batches', access: SIGNED_IN },
  { method: 'GET', path: '/v1/batches/:id', access: SIGNED_IN },
  { method: 'POST', path: '/v1/batches/:id/events', access: { keys: 'EQUIPMENT' } },
  { method: 'POST', path: '/v1/batches/:id/lab-results', access: LAB_WRITERS },
  // Samples: the controller key of that equipment only.
  { method: 'POST', path: '/v1/equipment/:id/samples', access: { keys: 'EQUIPMENT', equipmentParam: 'id' } },
  // Deviations: everyone signed in reads; METALLURGIST or QUALITY acknowledge; QUALITY dispositions and closes.
  { method: 'GET', path: '/v1/deviations', access: SIGNED_IN },
  { method: 'GET', path: '/v1/deviations/:id', access: SIGNED_IN },
  { method: 'POST', path: '/v1/deviations/:id/acknowledge', access: { roles: ['METALLURGIST', 'QUALITY'] } },
  { method: 'POST', path: '/v1/deviations/:id/disposition', access: QUALITY },
  { method: 'POST', path: '/v1/deviations/:id/close', access: QUALITY },
  // Live events (server-sent events; EventSource clients may pass ?token=).
  { method: 'GET', path: '/v1/stream', access: SIGNED_IN, stream: true },

  // --- dashboard (W): chart series; the built app itself is static middleware, not a route --------
  { method: 'GET', path: '/v1/batches/:id/series', access: SIGNED_IN },

  // --- pyrometry (PW, issue 8): admins keep the records, admins or quality enter tests; everyone reads --
  { method: 'PUT', path: '/v1/equipment/:id/pyrometry', access: ADMIN },
  { method: 'GET', path: '/v1/equipment/:id/pyrometry', access: SIGNED_IN },
  { method: 'GET', path: '/v1/lines/:id/pyrometry/due', access: SIGNED_IN },
  { method: 'GET', path: '/v1/pyrometry/references', access: SIGNED_IN },
  { method: 'POST', path: '/v1/pyrometry/sensors', access: ADMIN },
  { method: 'GET', path: '/v1/pyrometry/sensors', access: SIGNED_IN },
  { method: 'GET', path: '/v1/pyrometry/sensors/:id', access: SIGNED_IN },
  { method: 'POST', path: '/v1/pyrometry/sensors/:id/calibrations', access: ADMIN },
  { method: 'POST', path: '/v1/pyrometry/sensors/:id/retire', access: ADMIN },
  { method: 'POST', path: '/v1/pyrometry/instruments', access: ADMIN },
  { method: 'GET', path: '/v1/pyrometry/instruments', access: SIGNED_IN },
  { method: 'POST', path: '/v1/pyrometry/instruments/:id/calibrations', access: ADMIN },
  { method: 'POST', path: '/v1/pyrometry/instruments/:id/retire', access: ADMIN },
  { method: 'POST', path: '/v1/equipment/:id/accuracy-tests', access: { roles: ['ADMIN', 'QUALITY'] } },
  { method: 'GET', path: '/v1/equipment/:id/accuracy-tests', access: SIGNED_IN },
  { method: 'POST', path: '/v1/pyrometry/accuracy-tests/import', access: { roles: ['ADMIN', 'QUALITY'] } },
  { method: 'POST', path: '/v1/equipment/:id/uniformity-surveys', access: { roles: ['ADMIN', 'QUALITY'] } },
  { method: 'POST', path: '/v1/equipment/:id/uniformity-surveys/import', access: { roles: ['ADMIN', 'QUALITY'] } },
  { method: 'GET', path: '/v1/equipment/:id/uniformity-surveys', access: SIGNED_IN },
  { method: 'GET', path: '/v1/equipment/:id/suspect-triggers', access: SIGNED_IN },
  { method: 'POST', path: '/v1/pyrometry/overdue-sweep', access: { roles: ['ADMIN', 'QUALITY'] } },

  // --- predictions (PC1, issue 4 items 1–3, 6): everyone signed in reads; the heat advice is a computation, not a write
  { method: 'GET', path: '/v1/batches/:id/predictions', access: SIGNED_IN },
  { method: 'POST', path: '/v1/heats/:id/advice', access: SIGNED_IN },
  { method: 'GET', path: '/v1/heats/:id/diagram', access: SIGNED_IN },

  // --- drift across lots, lab calibration, certificate data (PC2, issue 4 items 4, 5, 7): everyone signed in
  // reads; QUALITY sets a draft spec version's drift-chart settings ----------------------------------
  { method: 'GET', path: '/v1/drift', access: SIGNED_IN },
  { method: 'GET', path: '/v1/drift/charts', access: SIGNED_IN },
  { method: 'GET', path: '/v1/specs/:id/drift-charts', access: SIGNED_IN },
  { method: 'PUT', path: '/v1/specs/:id/versions/:version/drift-charts', access: QUALITY },
  { method: 'GET', path: '/v1/specs/:id/calibration', access: SIGNED_IN },
  { method: 'GET', path: '/v1/batches/:id/certificate', access: SIGNED_IN },
  { method: 'GET', path: '/v1/lots/:lotKey/certificate', access: SIGNED_IN },
];

/**
 * Routes that are not Nest handlers and so carry no @Access: the OpenAPI page and documents that
 * SwaggerModule registers directly on Express. They are public by design (the API's shape is not a
 * secret; no data is in them). The matrix test checks what each answers an anonymous GET.
 */
export const NON_NEST_ROUTES: readonly { method: HttpMethod; path: string; anonymousStatus: number }[] = [
  { method: 'GET', path: '/docs', anonymousStatus: 200 },
  { method: 'GET', path: '/docs/', anonymousStatus: 200 },
  { method: 'GET', path: '/docs/index.html', anonymousStatus: 200 },
  // SwaggerModule registers this route only to answer 404 (it hides swagger-ui's licence file).
  { method: 'GET', path: '/docs/LICENSE', anonymousStatus: 404 },
  { method: 'GET', path: '/docs/swagger-ui-init.js', anonymousStatus: 200 },
  { method: 'GET', path: '/docs/docs/swagger-ui-init.js', anonymousStatus: 200 },
  { method: 'GET', path: '/docs-json', anonymousStatus: 200 },
  { method: 'GET', path: '/docs-yaml', anonymousStatus: 200 },
];
