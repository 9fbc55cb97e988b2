import type { SimLogEvent } from './controller.js';
import { ApiClient, ApiError } from './http.js';
import { hashString } from './rng.js';
import { DEMO_USERS, LAB_KEY_LABEL, LINES, PRODUCTS, bathChannels, controllerKeyLabel, furnaceChannels, type DemoUserDef } from './plant.js';
import type { LineHandles, PlantHandles } from './simulator.js';

/**
 * Sets up the demo plant through the public API, as a plant's own admin and quality engineer would:
 * lines, furnaces and baths with their channels (admin), demo users for each role (admin), product specs
 * with their versions, approved (quality), and one API key per line controller scoped to that line's furnace
 * and bath, plus a lab key (admin). Every step is idempotent: a second run finds what exists and adds only what is missing.
 */

interface ChannelRow {
  id: string;
  code: string;
}
interface EquipmentRow {
  id: string;
  code: string;
  kind: 'FURNACE' | 'BATH';
  lineId: string;
  channels: ChannelRow[];
}
interface LineRow {
  id: string;
  code: string;
  equipment: EquipmentRow[];
}
interface SpecVersionRow {
  version: number;
  status: 'DRAFT' | 'APPROVED' | 'SUPERSEDED';
  chemistryLimits: unknown;
  processWindow: unknown;
  acceptanceCriteria: unknown;
}
interface SpecRow {
  id: string;
  code: string;
  versions: SpecVersionRow[];
}
interface KeyRow {
  id: string;
  label: string;
  revokedAt: string | null;
}

export interface CreatedUser extends DemoUserDef {
  oneTimePassword: string;
}

export interface SetupOptions {
  apiUrl: string;
  /** Session token of an admin. */
  adminToken: string;
  /** Passwords of demo users created by an earlier run (by e-mail); needed to sign in as quality. */
  knownPasswords?: Readonly<Record<string, string>>;
  /** Controller and lab keys from an earlier run (by label); reused when they still work. */
  knownKeys?: Readonly<Record<string, string>>;
  log?: (event: SimLogEvent) => void;
}

export interface SetupResult {
  plant: PlantHandles;
  /** Users created now, with their one-time passwords (print them once). */
  createdUsers: CreatedUser[];
  /** Every controller and lab key in use, by label (new or reused). */
  keys: Record<string, string>;
  specsChanged: string[];
}

export async function setupDemoPlant(options: SetupOptions): Promise<SetupResult> {
  const log = options.log ?? (() => undefined);
  const api = new ApiClient(options.apiUrl, { bearer: options.adminToken });

  // --- lines, equipment, channels ------------------------------------------------------------
  const existing = await api.get<LineRow[]>('/v1/lines');
  const lineHandles: Array<Omit<LineHandles, 'apiKey'>> = [];
  for (const def of LINES) {
    let line = existing.find((l) => l.code === def.code);
    if (!line) {
      const created = await api.post<Omit<LineRow, 'equipment'>>('/v1/lines', {
        code: def.code,
        name: def.name,
        timeZone: def.timeZone,
        hCoefficientByAgitation: def.hCoefficientByAgitation,
      });
      line = { ...created, equipment: [] };
      log({ level: 'info', msg: 'line created', line: def.code });
    }
    const ensureEquipment = async (kind: 'FURNACE' | 'BATH', code: string, name: string, channels: ReturnType<typeof furnaceChannels>) => {
      let equipment = line!.equipment.find((e) => e.code === code);
      if (!equipment) {
        const created = await api.post<Omit<EquipmentRow, 'channels'>>(`/v1/lines/${line!.id}/equipment`, { kind, code, name });
        equipment = { ...created, channels: [] };
        log({ level: 'info', msg: 'equipment created', line: def.code, equipment: code });
      }
      for (const channel of channels) {
        if (equipment.channels.some((c) => c.code === channel.code)) continue;
        await api.post(`/v1/equipment/${equipment.id}/channels`, { code: channel.code, quantity: channel.quantity, role: channel.role });
      }
      return { code, id: equipment.id };
    };
    const furnace = await ensureEquipment('FURNACE', def.furnace.code, def.furnace.name, furnaceChannels(def.furnace));
    const bath = await ensureEquipment('BATH', def.bath.code, def.bath.name, bathChannels(def.bath));
    lineHandles.push({ code: def.code, id: line.id, furnace, bath });
  }

  // --- users ------------------------------------------------------------------------------------
  const createdUsers: CreatedUser[] = [];
  const passwords: Record<string, string> = { ...(options.knownPasswords ?? {}) };
  for (const user of DEMO_USERS) {
    const reply = await api.call<{ oneTimePassword?: string }>('POST', '/v1/users', { email: user.email, displayName: user.displayName, roles: user.roles }, { accept: [409] });
    if (reply.status === 409) continue;
    const password = reply.body.oneTimePassword;
    if (!password) throw new Error(`POST /v1/users for ${user.email} returned no one-time password`);
    createdUsers.push({ ...user, oneTimePassword: password });
    passwords[user.email] = password;
    log({ level: 'info', msg: 'user created', email: user.email, roles: user.roles });
  }

  // --- product specs (quality) ---------------------------------------------------------------
  const specsChanged = await ensureSpecs(api, passwords, log);

  // --- API keys ------------------------------------------------------------------------------
  const keys: Record<string, string> = {};
  let keyRows: KeyRow[] | null = null;
  const ensureKey = async (label: string, scope: 'EQUIPMENT' | 'LAB', equipmentIds: string[] = []): Promise<string> => {
    const known = options.knownKeys?.[label];
    if (known && (await keyStillWorks(options.apiUrl, known, equipmentIds))) return (keys[label] = known);
    keyRows ??= await api.get<KeyRow[]>('/v1/api-keys');
    // The secret of an active key with this label is lost (shown once, in an earlier reply): revoke it.
    for (const row of keyRows.filter((k) => k.label === label && k.revokedAt === null)) {
      await api.post(`/v1/api-keys/${row.id}/revoke`, {});
      log({ level: 'info', msg: 'old controller key revoked', label });
    }
    const created = await api.post<{ key: string }>('/v1/api-keys', { label, scope, ...(equipmentIds.length > 0 ? { equipmentIds } : {}) });
    log({ level: 'info', msg: 'API key created', label, scope });
    return (keys[label] = created.key);
  };
  const lines: LineHandles[] = [];
  for (const l of lineHandles) {
    lines.push({ ...l, apiKey: await ensureKey(controllerKeyLabel(l.code), 'EQUIPMENT', [l.furnace.id, l.bath.id]) });
  }
  const labKey = await ensureKey(LAB_KEY_LABEL, 'LAB');
  return { plant: { lines, labKey }, createdUsers, keys, specsChanged };
}

async function keyStillWorks(apiUrl: string, key: string, equipmentIds: string[]): Promise<boolean> {
  try {
    const me = await new ApiClient(apiUrl, { apiKey: key }).get<{ kind: string; equipmentIds?: string[] }>('/v1/me');
    return me.kind === 'apiKey' && equipmentIds.every((id) => (me.equipmentIds ?? []).includes(id));
  } catch (error) {
    if (error instanceof ApiError && (error.status === 401 || error.status === 403)) return false;
    throw error;
  }
}

/** JSON with sorted keys: the stored spec payload compared with ours regardless of key order. */
function stable(value: unknown): string {
  if (value === null || typeof value !== 'object') return JSON.stringify(value) ?? 'null';
  if (Array.isArray(value)) return `[${value.map(stable).join(',')}]`;
  const obj = value as Record<string, unknown>;
  return `{${Object.keys(obj)
    .filter((k) => obj[k] !== undefined)
    .sort()
    .map((k) => `${JSON.stringify(k)}:${stable(obj[k])}`)
    .join(',')}}`;
}

const contentOf = (v: { chemistryLimits: unknown; processWindow: unknown; acceptanceCriteria: unknown }) =>
  stable({ chemistryLimits: v.chemistryLimits, processWindow: v.processWindow, acceptanceCriteria: v.acceptanceCriteria });

async function ensureSpecs(admin: ApiClient, passwords: Record<string, string>, log: (event: SimLogEvent) => void): Promise<string[]> {
  const specs = await admin.get<SpecRow[]>('/v1/specs');
  const needsWork = PRODUCTS.filter((product) => {
    const spec = specs.find((s) => s.code === product.code);
    const inForce = spec?.versions.filter((v) => v.status === 'APPROVED').sort((a, b) => b.version - a.version)[0];
    return !inForce || contentOf(inForce) !== contentOf(product.versions[product.versions.length - 1]!);
  });
  if (needsWork.length === 0) return [];

  const qualityUser = DEMO_USERS.find((u) => u.roles.includes('QUALITY'))!;
  const password = passwords[qualityUser.email];
  if (!password) {
    throw new Error(
      `Product specs must be set up by a QUALITY user, and the password of ${qualityUser.email} is not known ` +
        '(it was printed when the user was created). Start from a fresh database (npm run demo -- --reset).',
    );
  }
  const login = await new ApiClient(admin.baseUrl).post<{ token: string }>('/v1/auth/login', { email: qualityUser.email, password });
  const quality = admin.with({ bearer: login.token });

  const changed: string[] = [];
  for (const product of needsWork) {
    const created = await quality.post<{ spec: { id: string } }>('/v1/specs', {
      code: product.code,
      name: product.name,
      material: product.material,
      description: product.description,
    });
    const specId = created.spec.id;
    const stored = (await quality.get<SpecRow>(`/v1/specs/${specId}`)).versions;
    // A fresh spec gets its whole history (v1 approved, then superseded by v2 ...); an existing one only the version in force.
    const toAdd = stored.length === 0 ? product.versions : [product.versions[product.versions.length - 1]!];
    for (const version of toAdd) {
      const same = stored.find((v) => contentOf(v) === contentOf(version) && v.status !== 'SUPERSEDED');
      const row = same ?? (await quality.post<SpecVersionRow>(`/v1/specs/${specId}/versions`, version, { idempotencyKey: `demo-setup.${product.code}.${hashString(contentOf(version)).toString(16)}` }));
      // Drift-chart settings can change on a draft only: set them before the version in force is approved.
      if (product.driftCharts && version === product.versions[product.versions.length - 1] && row.status === 'DRAFT') {
        await quality.call('PUT', `/v1/specs/${specId}/versions/${row.version}/drift-charts`, product.driftCharts);
      }
      await quality.post(`/v1/specs/${specId}/versions/${row.version}/approve`, {});
    }
    changed.push(product.code);
    log({ level: 'info', msg: 'product spec approved', spec: product.code, versions: toAdd.length });
  }
  return changed;
}
