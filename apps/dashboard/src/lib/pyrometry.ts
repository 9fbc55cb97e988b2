/**
 * Pyrometry on screen (issue 8): how due items are ordered, worded and dated, and which reference values
 * behind them still need the plant's own copy of the standard. Pure functions over the API's JSON; the
 * API (libs/compliance) decides every status, this only presents it.
 *
 * Ordering: overdue first, then "no rule" (nobody knows the interval, so nobody can say it is in date),
 * then due soon, then in date. Within a status the earliest due date first; an item overdue for a reason
 * the calendar does not show (failed since its last pass, never passed, use limit reached) comes before
 * every one that is merely past its date, whatever its nominal due date.
 */

import { formatDateTime, wallParts } from './time.js';

export type DueStatus = 'ok' | 'due-soon' | 'overdue' | 'no-rule';

export interface RuleLike {
  key: string;
  value: string;
  confirmed: boolean;
  note: string;
}

export interface DueItemLike {
  kind: string;
  subjectId: string;
  dueDate: string | null;
  status: DueStatus;
  causes: readonly string[];
  rules: readonly RuleLike[];
  usesSoFar?: number;
  usesLimit?: number | 'unlimited' | null;
}

/** Display order of statuses: lower comes first. */
export const DUE_STATUS_ORDER: Record<DueStatus, number> = { overdue: 0, 'no-rule': 1, 'due-soon': 2, ok: 3 };

const KIND_ORDER: Record<string, number> = { tus: 0, sat: 1, 'sensor-calibration': 2, 'instrument-calibration': 3, 'sensor-replacement': 4, 'sensor-expiry': 5 };

const KIND_WORD: Record<string, string> = {
  tus: 'Uniformity survey',
  sat: 'Accuracy test',
  'sensor-calibration': 'Sensor calibration',
  'instrument-calibration': 'Instrument calibration',
  'sensor-replacement': 'Sensor replacement',
  'sensor-expiry': 'Sensor expiry',
};

export const fmtDueKind = (kind: string): string => KIND_WORD[kind] ?? kind.replace(/-/g, ' ').replace(/^./, (c) => c.toUpperCase());

/** Word, shape and CSS class of a status: it reads without colour too. */
export function dueStatusLook(status: DueStatus): { label: string; icon: string; cls: string } {
  switch (status) {
    case 'overdue':
      return { label: 'Overdue', icon: '■', cls: 'overdue' };
    case 'no-rule':
      return { label: 'No rule on record', icon: '?', cls: 'no-rule' };
    case 'due-soon':
      return { label: 'Due soon', icon: '▲', cls: 'due-soon' };
    case 'ok':
      return { label: 'In date', icon: '●', cls: 'ok' };
  }
}

/** Sort comparator for due items (and rows that carry one under `item`). */
/** Overdue for a reason the calendar does not show: the equipment is not qualified whatever the date says. */
const UNDATED_OVERDUE = ['last-result-failed', 'never-passed', 'use-limit-reached'];

/** The date an item sorts by; null = before every date (overdue items) or after (the rest). */
function sortDate(i: DueItemLike): string | null {
  if (i.status === 'overdue' && i.causes.some((c) => UNDATED_OVERDUE.includes(c))) return null;
  return i.dueDate;
}

export function compareDue(a: DueItemLike, b: DueItemLike): number {
  const s = DUE_STATUS_ORDER[a.status] - DUE_STATUS_ORDER[b.status];
  if (s !== 0) return s;
  const da = sortDate(a);
  const db = sortDate(b);
  if (da !== db) {
    // No date: for an overdue item the most urgent (failed, never passed, use limit reached); else last.
    if (da === null) return a.status === 'overdue' ? -1 : 1;
    if (db === null) return b.status === 'overdue' ? 1 : -1;
    return da < db ? -1 : 1;
  }
  return (KIND_ORDER[a.kind] ?? 99) - (KIND_ORDER[b.kind] ?? 99);
}

export function sortDueItems<T extends DueItemLike>(items: readonly T[]): T[] {
  return [...items].sort(compareDue);
}

export function worstStatus(items: readonly { status: DueStatus }[]): DueStatus {
  return items.reduce<DueStatus>((w, i) => (DUE_STATUS_ORDER[i.status] < DUE_STATUS_ORDER[w] ? i.status : w), 'ok');
}

/** How many items per status. */
export function countByStatus(items: readonly { status: DueStatus }[]): Record<DueStatus, number> {
  const out: Record<DueStatus, number> = { overdue: 0, 'no-rule': 0, 'due-soon': 0, ok: 0 };
  for (const i of items) out[i.status]++;
  return out;
}

const pad = (n: number): string => String(n).padStart(2, '0');

/** Today's calendar date (YYYY-MM-DD) at the plant, from an instant. */
export function plantDate(ms: number, zone: string): string {
  const p = wallParts(ms, zone);
  return `${p.year}-${pad(p.month)}-${pad(p.day)}`;
}

/** Whole calendar days from date a to date b (YYYY-MM-DD); negative when b is before a. */
export function calendarDaysBetween(a: string, b: string): number {
  const ms = (d: string): number => Date.UTC(Number(d.slice(0, 4)), Number(d.slice(5, 7)) - 1, Number(d.slice(8, 10)));
  return Math.round((ms(b) - ms(a)) / 86_400_000);
}

const days = (n: number): string => `${n} day${n === 1 ? '' : 's'}`;

/**
 * When, in words, relative to the plant's today: "overdue by 3 days", "due today", "in 12 days", or the
 * cause when the date does not tell it ("last result failed", "no passing result on record").
 */
export function dueWhen(item: DueItemLike, today: string): string {
  const causes = new Set(item.causes);
  const lead = causes.has('last-result-failed')
    ? 'last result failed, not passed since'
    : causes.has('never-passed')
      ? 'no passing result on record'
      : causes.has('use-limit-reached')
        ? 'use limit reached: may not be used again'
        : item.status === 'no-rule'
          ? 'interval not given: enter it from the plant\u2019s copy of the standard'
          : null;
  if (item.dueDate === null) return lead ?? '—';
  const d = calendarDaysBetween(today, item.dueDate);
  // A failure or a reached limit governs; a nominal date still ahead would only mislead.
  if (lead) return d < 0 ? `${lead}; also past its due date by ${days(-d)}` : lead;
  return d < 0 ? `overdue by ${days(-d)}` : d === 0 ? 'due today (last day in date)' : `in ${days(d)}`;
}

/** The due-date cell: "now" when the item is overdue whatever its date says, else the plant date. */
export function dueDateText(item: DueItemLike): string {
  if (sortDate(item) === null && item.status === 'overdue') return 'now';
  return item.dueDate ?? '—';
}

const UUID = /\b[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}\b/gi;

/** Ids in API texts (reasons, rule keys) replaced by the serials and codes people read on the tags. */
export function nameIds(text: string, names: ReadonlyMap<string, string>): string {
  return text.replace(UUID, (id) => names.get(id.toLowerCase()) ?? id.slice(0, 8));
}

const RULE_ITEM_WORD: Record<string, string> = {
  tusInterval: 'survey interval',
  satInterval: 'accuracy test interval',
  satDifferenceLimit: 'accuracy test limit',
  uniformityTolerance: 'uniformity tolerance',
  sensorCalibrationInterval: 'sensor calibration interval',
  instrumentCalibrationInterval: 'instrument calibration interval',
  sensorReplacement: 'sensor replacement',
  sensorAccuracy: 'sensor accuracy',
  instrumentAccuracy: 'instrument accuracy',
  expiresOn: 'expiry date on record',
};

/**
 * A rule key such as "AMS2750G+overlay(HT-7) tusInterval class 5 type B" in words, without the reference
 * set (the page names it once): "survey interval class 5 type B".
 */
export function fmtRuleKey(key: string, referenceIds: readonly string[] = []): string {
  const prefix = [...referenceIds].sort((a, b) => b.length - a.length).find((r) => key.startsWith(`${r} `));
  const rest = prefix ? key.slice(prefix.length + 1) : key;
  return rest.split(' ').map((w) => RULE_ITEM_WORD[w] ?? w).join(' ');
}

/** "12 of 30 uses", "12 uses (no limit)", or null when the item is not about uses. */
export function fmtUses(usesSoFar: number | undefined, usesLimit: number | 'unlimited' | null | undefined): string | null {
  if (usesSoFar === undefined) return null;
  if (usesLimit === 'unlimited') return `${usesSoFar} use${usesSoFar === 1 ? '' : 's'} (no use limit)`;
  if (usesLimit === null || usesLimit === undefined) return `${usesSoFar} use${usesSoFar === 1 ? '' : 's'} (limit not given)`;
  return `${usesSoFar} of ${usesLimit} uses`;
}

/** Reference values behind what is shown that are not confirmed for the revision, once each, by key. */
export function unconfirmedRules(rules: Iterable<RuleLike | null | undefined>): RuleLike[] {
  const byKey = new Map<string, RuleLike>();
  for (const r of rules) if (r && !r.confirmed && !byKey.has(r.key)) byKey.set(r.key, r);
  return [...byKey.values()].sort((a, b) => (a.key < b.key ? -1 : a.key > b.key ? 1 : 0));
}

const ISO_INSTANT = /\b\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(?::\d{2}(?:\.\d+)?)?(?:Z|[+-]\d{2}:\d{2})/g;

/** Texts from the API name instants in UTC ISO form; on screen they read in plant time like everything else. */
export function localizeInstants(text: string, zone: string): string {
  return text.replace(ISO_INSTANT, (iso) => formatDateTime(iso, zone));
}

/** "±1.7 °C" style correction list of a certificate: "+0.4 °C at 300 °C, +1.1 °C at 1000 °C". */
export function fmtCorrections(points: readonly { atC: number; correctionC: number }[]): string {
  if (points.length === 0) return 'none';
  const sign = (v: number): string => (v > 0 ? '+' : v < 0 ? '−' : '±');
  const num = (v: number): string => String(Math.round(Math.abs(v) * 100) / 100);
  return [...points].sort((a, b) => a.atC - b.atC).map((p) => `${sign(p.correctionC)}${num(p.correctionC)} °C at ${num(p.atC)} °C`).join(', ');
}

/** A plant-wide due list: one row per item, with where it belongs, worst first. */
export interface DueRow<T extends DueItemLike> {
  lineCode: string;
  /** null for the test kit (test sensors and field test instruments attached to no equipment). */
  equipmentId: string | null;
  equipmentCode: string;
  item: T;
}

export function plantDueRows<T extends DueItemLike>(
  lists: readonly { lineCode: string; equipment: readonly { equipmentId: string; equipmentCode: string; items: readonly T[] }[]; testKit: readonly T[] }[],
): DueRow<T>[] {
  const rows: DueRow<T>[] = [];
  for (const list of lists) {
    for (const e of list.equipment) for (const item of e.items) rows.push({ lineCode: list.lineCode, equipmentId: e.equipmentId, equipmentCode: e.equipmentCode, item });
    // The test kit is shared by the plant: every line's list repeats it; keep the strictest copy.
    for (const item of list.testKit) {
      const key = `${item.kind}:${item.subjectId}`;
      const prev = rows.findIndex((r) => r.equipmentId === null && `${r.item.kind}:${r.item.subjectId}` === key);
      if (prev === -1) {
        rows.push({ lineCode: 'all lines', equipmentId: null, equipmentCode: 'Test kit', item });
      } else if (compareDue(item, rows[prev]!.item) < 0) {
        rows[prev] = { ...rows[prev]!, item };
      }
    }
  }
  return rows.sort((a, b) => compareDue(a.item, b.item) || a.lineCode.localeCompare(b.lineCode) || a.equipmentCode.localeCompare(b.equipmentCode));
}

export type Role = 'METALLURGIST' | 'QUALITY' | 'ADMIN';
export type PyrometryAction = 'maintain-records' | 'record-tests' | 'overdue-sweep' | 'disposition';

/**
 * Who may do what around pyrometry, as the API's endpoint matrix says (a unit test holds the two
 * together): admins keep the records, admins or quality enter tests and run the overdue check, quality
 * dispositions suspect product. The screens only keep refused buttons from being offered; the API decides.
 */
export const PYROMETRY_ACTIONS: Record<PyrometryAction, { roles: readonly Role[]; method: 'POST' | 'PUT'; path: string; what: string }> = {
  'maintain-records': { roles: ['ADMIN'], method: 'PUT', path: '/v1/equipment/:id/pyrometry', what: 'keep equipment records, sensors, instruments and certificates' },
  'record-tests': { roles: ['ADMIN', 'QUALITY'], method: 'POST', path: '/v1/equipment/:id/accuracy-tests', what: 'enter accuracy tests and uniformity surveys' },
  'overdue-sweep': { roles: ['ADMIN', 'QUALITY'], method: 'POST', path: '/v1/pyrometry/overdue-sweep', what: 'run the overdue check' },
  disposition: { roles: ['QUALITY'], method: 'POST', path: '/v1/deviations/:id/disposition', what: 'disposition suspect product' },
};

const ROLE_WORD: Record<Role, string> = { METALLURGIST: 'metallurgist', QUALITY: 'quality', ADMIN: 'admin' };

export function pyrometryPermission(action: PyrometryAction, roles: readonly Role[]): { permitted: boolean; why: string | null } {
  const rule = PYROMETRY_ACTIONS[action];
  if (roles.some((r) => rule.roles.includes(r))) return { permitted: true, why: null };
  return { permitted: false, why: `needs the ${rule.roles.map((r) => ROLE_WORD[r]).join(' or ')} role (you are ${roles.map((r) => ROLE_WORD[r]).join(', ') || 'without a role'})` };
}
