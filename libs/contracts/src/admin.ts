import { z } from 'zod';

/**
 * Payloads of the sign-in and plant-administration endpoints (apps/api: /v1/auth, /v1/lines,
 * /v1/equipment, /v1/users, /v1/api-keys). Codes are the plant's own short names; they are unique
 * and a retried create with an existing code answers 409 instead of storing a duplicate.
 */

export const ROLES = ['METALLURGIST', 'QUALITY', 'ADMIN'] as const;
export const RoleName = z.enum(ROLES);
export type RoleName = z.infer<typeof RoleName>;

/** Plant codes: letters, digits, '-', '_' and '.', as typed on a controller's configuration screen. */
const Code = z
  .string()
  .trim()
  .min(1, 'must not be empty')
  .max(64, 'at most 64 characters')
  .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, "letters, digits, '.', '_' or '-', starting with a letter or digit");

const DisplayName = z.string().trim().min(1, 'must not be empty').max(200, 'at most 200 characters');

function isIanaTimeZone(zone: string): boolean {
  try {
    new Intl.DateTimeFormat('en', { timeZone: zone });
    return true;
  } catch {
    return false;
  }
}

export const LoginRequest = z.strictObject({
  email: z.string().trim().min(1, 'must not be empty').max(320),
  password: z.string().min(1, 'must not be empty').max(1024),
});
export type LoginRequest = z.infer<typeof LoginRequest>;

/** Passwords chosen by people: long enough to resist guessing, short enough to bound hashing work. */
export const NewPassword = z.string().min(12, 'at least 12 characters').max(1024, 'at most 1024 characters');

export const ChangePasswordRequest = z.strictObject({
  currentPassword: z.string().min(1, 'must not be empty').max(1024),
  newPassword: NewPassword,
});
export type ChangePasswordRequest = z.infer<typeof ChangePasswordRequest>;

export const CreateLineRequest = z.strictObject({
  code: Code,
  name: DisplayName,
  timeZone: z.string().refine(isIanaTimeZone, 'not an IANA time zone (e.g. Europe/Berlin)'),
  /** Bath heat-transfer coefficient h in W/(m²·K) per agitation level, e.g. {"none": 900, "mild": 1300}. */
  hCoefficientByAgitation: z.record(z.string().min(1), z.number().positive().max(100_000)).optional(),
});
export type CreateLineRequest = z.infer<typeof CreateLineRequest>;

export const EQUIPMENT_KINDS = ['FURNACE', 'BATH'] as const;
export const CreateEquipmentRequest = z.strictObject({
  kind: z.enum(EQUIPMENT_KINDS),
  code: Code,
  name: DisplayName,
});
export type CreateEquipmentRequest = z.infer<typeof CreateEquipmentRequest>;

export const CHANNEL_QUANTITIES = [
  'TEMPERATURE_C',
  'AGITATION_RPM',
  'LEVEL_MM',
  'WATER_CONTENT_PCT',
  'CARBON_POTENTIAL_PCT',
] as const;
export const CHANNEL_ROLES = [
  'FURNACE_ZONE',
  'LOAD_TC',
  'BATH_TC',
  'BATH_AGITATION',
  'BATH_LEVEL',
  'BATH_WATER',
  'FURNACE_ATMOSPHERE',
  'OTHER',
] as const;
export const CreateChannelRequest = z.strictObject({
  /** The short name the controller uses when it posts samples, unique per equipment: 'tc1', 'zone1'. */
  code: Code,
  quantity: z.enum(CHANNEL_QUANTITIES),
  role: z.enum(CHANNEL_ROLES),
});
export type CreateChannelRequest = z.infer<typeof CreateChannelRequest>;

export const CreateUserRequest = z.strictObject({
  email: z.email('not an e-mail address').max(320),
  displayName: DisplayName,
  roles: z.array(RoleName).min(1, 'at least one role').refine((r) => new Set(r).size === r.length, 'roles repeat'),
  /** Omit to have the service generate a one-time password that the reply shows once. */
  password: NewPassword.optional(),
});
export type CreateUserRequest = z.infer<typeof CreateUserRequest>;

export const API_KEY_SCOPES = ['EQUIPMENT', 'LAB'] as const;
export const CreateApiKeyRequest = z
  .strictObject({
    label: DisplayName,
    scope: z.enum(API_KEY_SCOPES),
    /** EQUIPMENT keys: the equipment this controller may post for (at least one). LAB keys: omit. */
    equipmentIds: z.array(z.uuid('not a UUID')).max(100).optional(),
  })
  .superRefine((key, ctx) => {
    if (key.scope === 'EQUIPMENT' && (key.equipmentIds === undefined || key.equipmentIds.length === 0)) {
      ctx.addIssue({ code: 'custom', path: ['equipmentIds'], message: 'an EQUIPMENT key needs at least one equipment id' });
    }
    if (key.scope === 'LAB' && key.equipmentIds !== undefined && key.equipmentIds.length > 0) {
      ctx.addIssue({ code: 'custom', path: ['equipmentIds'], message: 'a LAB key is not scoped to equipment; omit equipmentIds' });
    }
  });
export type CreateApiKeyRequest = z.infer<typeof CreateApiKeyRequest>;
