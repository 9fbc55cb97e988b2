import { describe, expect, it } from 'vitest';
import * as lib from '@ausline/metallurgy';

describe('workspace wiring', () => {
  it('resolves @ausline/metallurgy to its TypeScript source', () => {
    expect(typeof lib).toBe('object');
  });
});
