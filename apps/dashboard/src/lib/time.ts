/**
 * Times on screen are the plant's wall-clock time (the API's PLANT_TIME_ZONE), never the browser's:
 * a quality manager reviewing from another site must read the same 06:14 the shift saw. Every screen
 * says which zone it shows (plantZoneLabel).
 */

const formatters = new Map<string, Intl.DateTimeFormat>();

function formatter(zone: string, key: string, options: Intl.DateTimeFormatOptions): Intl.DateTimeFormat {
  const id = `${zone}|${key}`;
  let f = formatters.get(id);
  if (!f) {
    f = new Intl.DateTimeFormat('en-GB', { timeZone: zone, hourCycle: 'h23', ...options });
    formatters.set(id, f);
  }
  return f;
}

interface WallParts {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
}

/** The wall-clock fields of an instant in a zone. */
export function wallParts(ms: number, zone: string): WallParts {
  const parts = formatter(zone, 'parts', {
    year: 'numeric',
    month: '2-digit',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
    second: '2-digit',
  }).formatToParts(new Date(ms));
  const get = (type: Intl.DateTimeFormatPartTypes): number => Number(parts.find((p) => p.type === type)?.value ?? '0');
  return { year: get('year'), month: get('month'), day: get('day'), hour: get('hour') % 24, minute: get('minute'), second: get('second') };
}

const pad = (n: number, width = 2): string => String(n).padStart(width, '0');

/** 'YYYY-MM-DD HH:mm' (or with seconds) in the zone. */
export function formatDateTime(ms: number | string | Date | null | undefined, zone: string, withSeconds = false): string {
  const t = toMs(ms);
  if (t === null) return '—';
  const p = wallParts(t, zone);
  return `${p.year}-${pad(p.month)}-${pad(p.day)} ${pad(p.hour)}:${pad(p.minute)}${withSeconds ? `:${pad(p.second)}` : ''}`;
}

/** 'HH:mm' or 'HH:mm:ss' in the zone. */
export function formatClock(ms: number | string | Date | null | undefined, zone: string, withSeconds = false): string {
  const t = toMs(ms);
  if (t === null) return '—';
  const p = wallParts(t, zone);
  return `${pad(p.hour)}:${pad(p.minute)}${withSeconds ? `:${pad(p.second)}` : ''}`;
}

/** Offset of the zone from UTC at an instant, in minutes (east positive): Europe/Berlin in January = 60. */
export function zoneOffsetMinutes(ms: number, zone: string): number {
  const p = wallParts(ms, zone);
  const asUtc = Date.UTC(p.year, p.month - 1, p.day, p.hour, p.minute, p.second);
  return Math.round((asUtc - Math.floor(ms / 1000) * 1000) / 60_000);
}

/** 'UTC+01:00' */
export function formatOffset(minutes: number): string {
  const sign = minutes < 0 ? '-' : '+';
  const abs = Math.abs(minutes);
  return `UTC${sign}${pad(Math.floor(abs / 60))}:${pad(abs % 60)}`;
}

/** 'Europe/Berlin (UTC+01:00)' for the header line "Times shown in ...". */
export function plantZoneLabel(zone: string, at: number = Date.now()): string {
  return `${zone} (${formatOffset(zoneOffsetMinutes(at, zone))})`;
}

/**
 * The instant of a wall-clock time in a zone: '2026-03-29T02:30' in Europe/Berlin. For a time that
 * occurs twice (autumn change) the earlier instant is returned; for one that does not exist (spring
 * change) the instant one offset-step later, as clocks read after the jump. Returns null when the text
 * is not a date-time.
 */
export function wallTimeToMs(text: string, zone: string): number | null {
  const m = /^(\d{4})-(\d{2})-(\d{2})(?:[T ](\d{2}):(\d{2})(?::(\d{2}))?)?$/.exec(text.trim());
  if (!m) return null;
  const [year, month, day, hour, minute, second] = [m[1], m[2], m[3], m[4] ?? '0', m[5] ?? '0', m[6] ?? '0'].map(Number) as [
    number,
    number,
    number,
    number,
    number,
    number,
  ];
  if (month < 1 || month > 12 || day < 1 || day > 31 || hour > 23 || minute > 59 || second > 59) return null;
  const asUtc = Date.UTC(year, month - 1, day, hour, minute, second);
  // Try the offsets in force around that time; the earliest instant that shows this wall time wins.
  const candidates = new Set([zoneOffsetMinutes(asUtc - 86_400_000, zone), zoneOffsetMinutes(asUtc, zone), zoneOffsetMinutes(asUtc + 86_400_000, zone)]);
  const matches = [...candidates]
    .map((offset) => asUtc - offset * 60_000)
    .filter((t) => {
      const p = wallParts(t, zone);
      return p.year === year && p.month === month && p.day === day && p.hour === hour && p.minute === minute;
    })
    .sort((a, b) => a - b);
  if (matches.length > 0) return matches[0]!;
  // A skipped time: the larger offset applies after the jump.
  return asUtc - Math.min(...candidates) * 60_000;
}

/** 'YYYY-MM-DDTHH:mm' of an instant in a zone, for <input type="datetime-local"> values. */
export function msToWallInput(ms: number, zone: string): string {
  const p = wallParts(ms, zone);
  return `${p.year}-${pad(p.month)}-${pad(p.day)}T${pad(p.hour)}:${pad(p.minute)}`;
}

/** '1 h 05 min', '12 min 30 s', '45 s'; negative durations get a leading minus. */
export function formatDuration(ms: number | null | undefined): string {
  if (ms === null || ms === undefined || !Number.isFinite(ms)) return '—';
  const sign = ms < 0 ? '−' : '';
  let s = Math.round(Math.abs(ms) / 1000);
  const h = Math.floor(s / 3600);
  s -= h * 3600;
  const min = Math.floor(s / 60);
  s -= min * 60;
  if (h > 0) return `${sign}${h} h ${pad(min)} min`;
  if (min > 0) return `${sign}${min} min ${pad(s)} s`;
  return `${sign}${s} s`;
}

export function toMs(value: number | string | Date | null | undefined): number | null {
  if (value === null || value === undefined) return null;
  if (typeof value === 'number') return Number.isFinite(value) ? value : null;
  const t = value instanceof Date ? value.getTime() : Date.parse(value);
  return Number.isFinite(t) ? t : null;
}

/** ISO 8601 with the zone's offset, e.g. '2026-03-01T06:14:05+01:00' (CSV exports). */
export function formatIsoInZone(ms: number | string | Date | null | undefined, zone: string): string {
  const t = toMs(ms);
  if (t === null) return '';
  const p = wallParts(t, zone);
  const offset = zoneOffsetMinutes(t, zone);
  const sign = offset < 0 ? '-' : '+';
  const abs = Math.abs(offset);
  return `${p.year}-${pad(p.month)}-${pad(p.day)}T${pad(p.hour)}:${pad(p.minute)}:${pad(p.second)}${sign}${pad(Math.floor(abs / 60))}:${pad(abs % 60)}`;
}
