/**
 * Heats over HTTP: one at a time and by CSV file. Re-posts are no-ops, changed chemistry is never
 * taken silently (409 naming the fields, or a new revision when the caller gives a reason), the CSV
 * import is all-or-nothing with errors naming row and column.
 */
import { describe, expect, it } from 'vitest';
import { startIngestWorld, uniqueCode } from './ingest-fixtures.js';

const world = await startIngestWorld('ingest-heats');
const { http, labKey, metallurgist, quality, admin } = world;

const steel = (heatNumber: string, chemistryWtPct: Record<string, number> = { C: 0.98, Si: 1.45, Mn: 1.05, Cr: 1.45 }) => ({
  heatNumber,
  material: 'STEEL',
  grade: '100CrMnSi6-4',
  chemistryWtPct,
  source: 'mill-certificate',
});

const heatCount = () => world.db.prisma.heat.count();
const revisionCount = () => world.db.prisma.heatRevision.count();

describe('POST /v1/heats', () => {
  it('creates a heat with revision 1 (201), and the same post again is a no-op (200)', async () => {
    const heat = steel(uniqueCode('H'));
    const created = await http.post('/v1/heats', heat, labKey.headers);
    expect(created.status).toBe(201);
    expect(created.body.outcome).toBe('created');
    expect(created.body.heat).toMatchObject({ heatNumber: heat.heatNumber, revision: 1, chemistryWtPct: heat.chemistryWtPct });

    const revisionsBefore = await revisionCount();
    const again = await http.post('/v1/heats', heat, labKey.headers);
    expect(again.status).toBe(200);
    expect(again.body.outcome).toBe('unchanged');
    expect(again.body.heat.id).toBe(created.body.heat.id);
    expect(await revisionCount()).toBe(revisionsBefore);
  });

  it('refuses changed chemistry without a reason with 409 naming each differing element, and changes nothing', async () => {
    const heat = steel(uniqueCode('H'));
    await http.post('/v1/heats', heat, labKey.headers);
    const changed = await http.post('/v1/heats', { ...heat, chemistryWtPct: { C: 0.98, Si: 1.52, Mn: 1.05 } }, labKey.headers);
    expect(changed.status).toBe(409);
    expect(changed.body.issues).toEqual([
      { path: 'chemistryWtPct.Cr', message: 'stored 1.45 wt%, sent (not stated)' },
      { path: 'chemistryWtPct.Si', message: 'stored 1.45 wt%, sent 1.52 wt%' },
    ]);
    const stored = await world.db.prisma.heat.findUniqueOrThrow({ where: { heatNumber: heat.heatNumber } });
    expect(stored.chemistryWtPct).toEqual(heat.chemistryWtPct);
    expect(stored.revision).toBe(1);
  });

  it('records a new revision when the caller gives revisionReason, keeping the old one', async () => {
    const heat = steel(uniqueCode('H'));
    const first = await http.post('/v1/heats', heat, labKey.headers);
    const revised = await http.post(
      '/v1/heats',
      { ...heat, chemistryWtPct: { ...heat.chemistryWtPct, Si: 1.52 }, revisionReason: 'mill re-issued the certificate after re-analysis' },
      metallurgist.headers,
    );
    expect(revised.status).toBe(200);
    expect(revised.body.outcome).toBe('revised');
    expect(revised.body.heat.revision).toBe(2);

    const detail = await http.get(`/v1/heats/${first.body.heat.id}`, quality.headers);
    expect(detail.status).toBe(200);
    expect(detail.body.chemistryWtPct.Si).toBe(1.52);
    expect(detail.body.revisions.map((r: { revision: number; chemistryWtPct: { Si: number }; changedBy: string; reason: string }) => [r.revision, r.chemistryWtPct.Si, r.changedBy, r.reason])).toEqual([
      [1, 1.45, `apikey:${labKey.prefix}`, 'first posted'],
      [2, 1.52, `user:${metallurgist.email}`, 'mill re-issued the certificate after re-analysis'],
    ]);
  });

  it('validates chemistry: unknown symbol, negative, not a number, sum over 100 — 400 naming the element, nothing written', async () => {
    const before = await heatCount();
    const cases: Array<[Record<string, unknown>, string]> = [
      [{ C: 0.5, Xx: 1 }, 'chemistryWtPct.Xx'],
      [{ C: 0.5, Mn: -0.1 }, 'chemistryWtPct.Mn'],
      [{ C: 0.5, Si: '1.4' }, 'chemistryWtPct.Si'],
      [{ C: 3.6, Si: 60, Cr: 50 }, 'chemistryWtPct'],
      [{ Si: 1.4 }, 'chemistryWtPct.C'],
    ];
    for (const [chemistryWtPct, path] of cases) {
      const reply = await http.post('/v1/heats', { ...steel(uniqueCode('H')), chemistryWtPct }, labKey.headers);
      expect(reply.status).toBe(400);
      expect(reply.body.issues.map((i: { path: string }) => i.path)).toContain(path);
    }
    const noMaterial = await http.post('/v1/heats', { heatNumber: uniqueCode('H'), chemistryWtPct: { C: 1 } }, labKey.headers);
    expect(noMaterial.body.issues[0].path).toBe('material');
    expect(await heatCount()).toBe(before);
  });

  it('is not open to equipment keys or admins', async () => {
    expect((await http.post('/v1/heats', steel(uniqueCode('H')), world.bathKey.headers)).status).toBe(403);
    expect((await http.post('/v1/heats', steel(uniqueCode('H')), admin.headers)).status).toBe(403);
  });
});

describe('POST /v1/heats/import (CSV)', () => {
  it('imports a file, reports per row, and a second import of the same file changes nothing', async () => {
    const [a, b] = [uniqueCode('HC'), uniqueCode('HC')];
    const csv = `heatNumber,material,grade,source,C,Si,Mn,Cr,Mo\n${a},STEEL,100CrMnSi6-4,mill-certificate,0.98,1.45,1.05,1.45,\n"${b}",ductile iron,EN-GJS-1050-6,foundry-spectrometer,3.6,2.5,0.3,,\n`;
    const first = await http.postText('/v1/heats/import', csv, labKey.headers);
    expect(first.status).toBe(200);
    expect(first.body).toMatchObject({ created: 2, revised: 0, unchanged: 0 });
    expect(first.body.heats.map((h: { row: number; heatNumber: string }) => [h.row, h.heatNumber])).toEqual([
      [2, a],
      [3, b],
    ]);
    const iron = await world.db.prisma.heat.findUniqueOrThrow({ where: { heatNumber: b } });
    expect(iron).toMatchObject({ material: 'DUCTILE_IRON', chemistryWtPct: { C: 3.6, Si: 2.5, Mn: 0.3 } });

    const second = await http.postText('/v1/heats/import', csv, labKey.headers);
    expect(second.body).toMatchObject({ created: 0, unchanged: 2 });
  });

  it('refuses a file with a bad cell naming row and column; nothing of the file is stored', async () => {
    const [a, b] = [uniqueCode('HC'), uniqueCode('HC')];
    const before = await heatCount();
    const csv = `heatNumber,material,C,Si\n${a},STEEL,0.6,1.5\n${b},STEEL,0.6,1,5\n`;
    const wrongCells = await http.postText('/v1/heats/import', csv, labKey.headers);
    expect(wrongCells.status).toBe(400);
    expect(wrongCells.body.issues).toEqual([{ path: 'rows.3', message: 'row 3: expected 4 cells like the header, found 5' }]);

    const badNumber = await http.postText('/v1/heats/import', `heatNumber,material,C,Si\n${a},STEEL,0.6,1.5\n${b},STEEL,0.6,abc\n`, labKey.headers);
    expect(badNumber.status).toBe(400);
    expect(badNumber.body.issues).toEqual([{ path: 'rows.3.Si', message: "row 3, column Si: expected a number (wt%), got 'abc'" }]);
    expect(badNumber.body.message).toMatch(/^Import refused, nothing stored: row 3, column Si/);
    expect(await heatCount()).toBe(before);
  });

  it('refuses the whole file with 409 when one row changes a stored heat without a reason; with a revisionReason column it revises', async () => {
    const existing = steel(uniqueCode('HC'));
    await http.post('/v1/heats', existing, labKey.headers);
    const fresh = uniqueCode('HC');
    const before = await heatCount();
    const csv = `heatNumber,material,grade,source,C,Si,Mn,Cr\n${fresh},STEEL,,,0.5,1.5,,\n${existing.heatNumber},STEEL,100CrMnSi6-4,mill-certificate,0.98,1.50,1.05,1.45\n`;
    const refused = await http.postText('/v1/heats/import', csv, labKey.headers);
    expect(refused.status).toBe(409);
    expect(refused.body.issues).toEqual([{ path: 'rows.3.Si', message: 'row 3, column Si: stored 1.45 wt%, sent 1.5 wt%' }]);
    // All or nothing: the new heat of row 2 was not stored either.
    expect(await heatCount()).toBe(before);

    const withReason = `heatNumber,material,grade,source,revisionReason,C,Si,Mn,Cr\n${fresh},STEEL,,,,0.5,1.5,,\n${existing.heatNumber},STEEL,100CrMnSi6-4,mill-certificate,corrected Si after re-analysis,0.98,1.50,1.05,1.45\n`;
    const accepted = await http.postText('/v1/heats/import', withReason, labKey.headers);
    expect(accepted.status).toBe(200);
    expect(accepted.body).toMatchObject({ created: 1, revised: 1, unchanged: 0 });
    expect(await heatCount()).toBe(before + 1);
  });

  it('refuses unknown columns, an empty file and JSON sent to the CSV endpoint', async () => {
    const unknown = await http.postText('/v1/heats/import', 'heatNumber,material,C,Zn\nH,STEEL,1,1\n', labKey.headers);
    expect(unknown.status).toBe(400);
    expect(unknown.body.issues[0].path).toBe('header.Zn');
    const empty = await http.postText('/v1/heats/import', '', labKey.headers);
    expect(empty.status).toBe(400);
    const json = await http.post('/v1/heats/import', { heats: [] }, labKey.headers);
    expect(json.status).toBe(415);
  });
});

describe('GET /v1/heats', () => {
  it('pages newest first with a total and a cursor, and filters by heat number', async () => {
    const numbers = [uniqueCode('HP'), uniqueCode('HP'), uniqueCode('HP')];
    for (const n of numbers) await http.post('/v1/heats', steel(n), labKey.headers);
    const total = await heatCount();
    const page1 = await http.get('/v1/heats?limit=2', metallurgist.headers);
    expect(page1.status).toBe(200);
    expect(page1.body.total).toBe(total);
    expect(page1.body.items).toHaveLength(2);
    expect(page1.body.items[0].heatNumber).toBe(numbers[2]);
    const seen = new Set<string>(page1.body.items.map((h: { id: string }) => h.id));
    let cursor: string | null = page1.body.nextCursor;
    while (cursor) {
      const page = await http.get(`/v1/heats?limit=2&cursor=${cursor}`, metallurgist.headers);
      for (const h of page.body.items) {
        expect(seen.has(h.id)).toBe(false);
        seen.add(h.id);
      }
      cursor = page.body.nextCursor;
    }
    expect(seen.size).toBe(total);

    const one = await http.get(`/v1/heats?heatNumber=${numbers[0]}`, metallurgist.headers);
    expect(one.body).toMatchObject({ total: 1, nextCursor: null });
    expect(one.body.items[0].heatNumber).toBe(numbers[0]);

    expect((await http.get('/v1/heats?limit=0', metallurgist.headers)).body.issues[0].path).toBe('query.limit');
    expect((await http.get('/v1/heats?cursor=garbage', metallurgist.headers)).status).toBe(400);
    expect((await http.get('/v1/heats/not-a-uuid', metallurgist.headers)).status).toBe(400);
    expect((await http.get(`/v1/heats/${crypto.randomUUID()}`, metallurgist.headers)).status).toBe(404);
  });
});
