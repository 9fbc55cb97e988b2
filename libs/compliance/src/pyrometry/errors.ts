// Input errors name the field path, so the API can turn them into a 4xx that says what is wrong
// and where, instead of a 500.

export class PyrometryInputError extends Error {
  constructor(
    readonly path: string,
    readonly problem: string,
  ) {
    super(`${path}: ${problem}`);
    this.name = 'PyrometryInputError';
  }
}

export function requireFinite(value: number, path: string): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) throw new PyrometryInputError(path, `must be a finite number, got ${String(value)}`);
  return value;
}

export function requireInstant(value: Date, path: string): Date {
  if (!(value instanceof Date) || Number.isNaN(value.getTime())) throw new PyrometryInputError(path, 'must be a valid instant');
  return value;
}
