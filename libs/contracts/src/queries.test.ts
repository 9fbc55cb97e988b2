/**
 * Path and query schemas that moved here from the api's controllers (issue 2: schemas live in
 * libs/contracts): they keep their field-naming errors.
 */
import { describe, expect, it } from 'vitest';
import { BatchSeriesQuery, DriftOverviewQuery, SpecVersionParams, StreamQuery } from './index.js';

const ID = '0b6c3a2e-4f1d-4c8e-9a7b-2d5e6f708192';

function issuePaths(result: { success: boolean; error?: { issues: Array<{ path: PropertyKey[] }> } }): string[] {
  return (result.error?.issues ?? []).map((i) => i.path.join('.'));
}

describe('moved path and query schemas', () => {
  it('SpecVersionParams reads the version from the path as a positive whole number', () => {
    expect(SpecVersionParams.parse({ id: ID, version: '3' })).toEqual({ id: ID, version: 3 });
    expect(issuePaths(SpecVersionParams.safeParse({ id: ID, version: '0' }))).toEqual(['version']);
    expect(issuePaths(SpecVersionParams.safeParse({ id: 'nope', version: '1.5' }))).toEqual(['id', 'version']);
  });

  it('StreamQuery takes a token and uuid filters, and refuses anything else', () => {
    expect(StreamQuery.parse({ token: 't', lineId: ID })).toEqual({ token: 't', lineId: ID });
    expect(issuePaths(StreamQuery.safeParse({ batchId: 'x' }))).toEqual(['batchId']);
    expect(StreamQuery.safeParse({ line: ID }).success).toBe(false);
  });

  it('DriftOverviewQuery needs the spec; the line is optional', () => {
    expect(DriftOverviewQuery.parse({ specId: ID })).toEqual({ specId: ID });
    expect(issuePaths(DriftOverviewQuery.safeParse({ lineId: ID }))).toEqual(['specId']);
  });

  it('BatchSeriesQuery splits channel ids, defaults maxPoints and wants to after from', () => {
    expect(BatchSeriesQuery.parse({ channelIds: `${ID}, ${ID}` })).toEqual({ channelIds: [ID, ID], maxPoints: 2000 });
    expect(issuePaths(BatchSeriesQuery.safeParse({ from: '2026-03-01T10:00:00Z', to: '2026-03-01T09:00:00Z' }))).toEqual(['to']);
    expect(issuePaths(BatchSeriesQuery.safeParse({ maxPoints: '1' }))).toEqual(['maxPoints']);
  });
});
