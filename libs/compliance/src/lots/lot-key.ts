// Lots: what a customer receives as one heat-treat lot.
//
// Definition (ours): a lot is every batch (furnace load) of ONE product spec made from ONE heat that went
// into the bath on ONE plant day (the calendar date in the line's time zone of the batch's INTO_BATH event;
// CHARGED, then the batch's creation, when it has none). Loads of one spec and heat on one day normally
// run back to back, so this is the "consecutive batches of one product spec and heat" of the issue in a form
// anyone can recompute from the record; a day that interleaves other work still makes one lot per spec and
// heat, and the certificate lists every load in it.
//
// lotKey = <spec code>:<heat number>:<YYYY-MM-DD>, each code percent-encoded (encodeURIComponent, which
// also encodes ':'), e.g. 'AS60-CLIP:H24117:2026-03-01'. A client puts the key into a URL path encoded
// once more (encodeURIComponent(lotKey)).

export interface LotIdentity {
  specCode: string;
  heatNumber: string;
  /** Plant date YYYY-MM-DD. */
  date: string;
}

const DATE = /^\d{4}-\d{2}-\d{2}$/;

export class LotKeyError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'LotKeyError';
  }
}

export function lotKeyOf(lot: LotIdentity): string {
  if (!DATE.test(lot.date)) throw new LotKeyError(`date must be YYYY-MM-DD, got '${lot.date}'`);
  return `${encodeURIComponent(lot.specCode)}:${encodeURIComponent(lot.heatNumber)}:${lot.date}`;
}

/** Parses a lot key; throws LotKeyError with a message naming the part that is wrong. */
export function parseLotKey(key: string): LotIdentity {
  const parts = key.split(':');
  if (parts.length !== 3) throw new LotKeyError(`expected <spec code>:<heat number>:<YYYY-MM-DD> (3 parts separated by ':'), got ${parts.length} part(s)`);
  const [spec, heat, date] = parts;
  let specCode: string;
  let heatNumber: string;
  try {
    specCode = decodeURIComponent(spec);
    heatNumber = decodeURIComponent(heat);
  } catch {
    throw new LotKeyError('spec code or heat number is not validly percent-encoded');
  }
  if (!specCode) throw new LotKeyError('spec code is empty');
  if (!heatNumber) throw new LotKeyError('heat number is empty');
  if (!DATE.test(date) || Number.isNaN(Date.parse(`${date}T00:00:00Z`)) || new Date(`${date}T00:00:00Z`).toISOString().slice(0, 10) !== date) {
    throw new LotKeyError(`date must be a calendar date YYYY-MM-DD, got '${date}'`);
  }
  return { specCode, heatNumber, date };
}

/** Calendar date (YYYY-MM-DD) of an instant in an IANA time zone. */
export function plantDate(epochMs: number, timeZone: string): string {
  const parts = new Intl.DateTimeFormat('en-CA', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).formatToParts(new Date(epochMs));
  const get = (type: string) => parts.find((p) => p.type === type)?.value ?? '';
  return `${get('year')}-${get('month')}-${get('day')}`;
}
