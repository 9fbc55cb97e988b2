import { describe, expect, it } from 'vitest';
import type { DeviationActor } from '@ausline/compliance';
import { createTestDatabase } from '../../../../tests/support/database.js';
import { createBatch, createUser, seedPlant } from '../../../../tests/fixtures/austempering-plant.js';
import { DeviationRepository, canonicalJson, type DeviationBatchRef, type DeviationFindingInput } from './deviations.js';

const db = await createTestDatabase();
const prisma = db.prisma;
const repo = new DeviationRepository(prisma);
const plant = await seedPlant(prisma);

async function newBatch(): Promise<DeviationBatchRef> {
  const b = await createBatch(prisma, plant);
  return { batchId: b.id, lineId: plant.lineId, productSpecId: plant.specId };
}

const finding = (batchId: string, over: Partial<DeviationFindingInput> = {}): DeviationFindingInput => ({
  rule: 'bath-band-excursion',
  severity: 'MAJOR',
  dedupKey: `${batchId}:bath-band-excursion:${plant.tcIds[0]}`,
  channelId: plant.tcIds[0],
  message: 'Bath thermocouple tc1 outside 360.0–380.0 °C for 155 s',
  details: { longestExcursionS: 155, highestC: 385, lowestC: null },
  ...over,
});

const audits = (deviationId: string) => prisma.deviationAudit.findMany({ where: { deviationId }, orderBy: [{ at: 'asc' }, { id: 'asc' }] });

async function userActor(roles: ('METALLURGIST' | 'QUALITY' | 'ADMIN')[]): Promise<DeviationActor> {
  const u = await createUser(prisma, roles);
  return { kind: 'user', userId: u.id, label: u.email, displayName: u.displayName, roles };
}

describe('DeviationRepository: worker side', () => {
  it('opens a deviation once and refreshes it without duplicating', async () => {
    const batch = await newBatch();
    const opened = await repo.openOrRefresh(finding(batch.batchId), batch);
    expect(opened).toMatchObject({ kind: 'opened', status: 'OPEN', rule: 'bath-band-excursion', batchId: batch.batchId });

    // same finding again: nothing changes, no new audit row
    expect(await repo.openOrRefresh(finding(batch.batchId), batch)).toBeNull();
    const rows = await prisma.deviation.findMany({ where: { batchId: batch.batchId } });
    expect(rows).toHaveLength(1);
    expect(rows[0]).toMatchObject({ status: 'OPEN', version: 0, productSpecId: plant.specId, lineId: plant.lineId });
    expect((await audits(rows[0].id)).map((a) => [a.action, a.fromStatus, a.toStatus, a.actorKind, a.actor])).toEqual([
      ['OPEN', null, 'OPEN', 'SYSTEM', 'worker'],
    ]);

    // worse now: refreshed in place, audited
    const worse = finding(batch.batchId, { message: 'Bath thermocouple tc1 outside 360.0–380.0 °C for 240 s', details: { longestExcursionS: 240, highestC: 387, lowestC: null } });
    expect(await repo.openOrRefresh(worse, batch)).toMatchObject({ kind: 'refreshed', deviationId: rows[0].id });
    const after = await prisma.deviation.findUniqueOrThrow({ where: { id: rows[0].id } });
    expect(after).toMatchObject({ message: worse.message, version: 1 });
    const trail = await audits(rows[0].id);
    expect(trail.map((a) => a.action)).toEqual(['OPEN', 'REFRESH']);
    expect(trail[1].details).toMatchObject({ previousMessage: rows[0].message });
  });

  it('treats details equal up to key order as unchanged (jsonb reorders keys)', async () => {
    expect(canonicalJson({ b: 1, a: { d: 2, c: [3, { f: 1, e: 2 }] } })).toBe(canonicalJson({ a: { c: [3, { e: 2, f: 1 }], d: 2 }, b: 1 }));
    const batch = await newBatch();
    await repo.openOrRefresh(finding(batch.batchId, { details: { zeta: 1, alpha: 2 } }), batch);
    expect(await repo.openOrRefresh(finding(batch.batchId, { details: { alpha: 2, zeta: 1 } }), batch)).toBeNull();
  });

  it('clears an unacknowledged deviation whose condition went away, and reopens the same one when it returns', async () => {
    const batch = await newBatch();
    const f = finding(batch.batchId);
    const opened = await repo.openOrRefresh(f, batch);
    const cleared = await repo.clearIfUnacknowledged(batch.batchId, []);
    expect(cleared).toEqual([expect.objectContaining({ kind: 'cleared', status: 'CLEARED', deviationId: opened!.deviationId })]);
    const row = await prisma.deviation.findUniqueOrThrow({ where: { id: opened!.deviationId } });
    expect(row).toMatchObject({ status: 'CLEARED', conditionPresent: false });
    expect(row.clearedAt).toBeInstanceOf(Date);

    // clearing again changes nothing
    expect(await repo.clearIfUnacknowledged(batch.batchId, [])).toEqual([]);

    const reopened = await repo.openOrRefresh(f, batch);
    expect(reopened).toMatchObject({ kind: 'reopened', status: 'OPEN', deviationId: opened!.deviationId });
    expect(await prisma.deviation.count({ where: { batchId: batch.batchId } })).toBe(1);
    expect((await audits(opened!.deviationId)).map((a) => `${a.action}:${a.fromStatus}->${a.toStatus}`)).toEqual([
      'OPEN:null->OPEN',
      'CLEAR:OPEN->CLEARED',
      'REOPEN:CLEARED->OPEN',
    ]);
  });

  it('keeps a reviewed deviation when its condition goes, with a note, and notes its return', async () => {
    const batch = await newBatch();
    const opened = await repo.openOrRefresh(finding(batch.batchId), batch);
    const metallurgist = await userActor(['METALLURGIST']);
    expect((await repo.transition(opened!.deviationId, { type: 'ACKNOWLEDGE' }, metallurgist)).ok).toBe(true);

    expect(await repo.clearIfUnacknowledged(batch.batchId, [])).toEqual([expect.objectContaining({ kind: 'noted', status: 'ACKNOWLEDGED' })]);
    expect(await prisma.deviation.findUniqueOrThrow({ where: { id: opened!.deviationId } })).toMatchObject({ status: 'ACKNOWLEDGED', conditionPresent: false });
    expect(await repo.clearIfUnacknowledged(batch.batchId, [])).toEqual([]); // noted once only

    expect(await repo.openOrRefresh(finding(batch.batchId), batch)).toMatchObject({ kind: 'noted', status: 'ACKNOWLEDGED' });
    expect((await audits(opened!.deviationId)).map((a) => a.action)).toEqual(['OPEN', 'ACKNOWLEDGE', 'NOTE', 'NOTE']);
  });

  it('clears only the rules it was told were evaluated and only deviations of that batch', async () => {
    const a = await newBatch();
    const b = await newBatch();
    await repo.openOrRefresh(finding(a.batchId), a);
    await repo.openOrRefresh(finding(a.batchId, { rule: 'hardness-band', dedupKey: `${a.batchId}:hardness-band`, channelId: null }), a);
    await repo.openOrRefresh(finding(b.batchId), b);
    const changes = await repo.clearIfUnacknowledged(a.batchId, [], { rules: ['bath-band-excursion'] });
    expect(changes.map((c) => c.rule)).toEqual(['bath-band-excursion']);
    expect(await prisma.deviation.count({ where: { batchId: b.batchId, status: 'OPEN' } })).toBe(1);
    expect(await prisma.deviation.count({ where: { batchId: a.batchId, rule: 'hardness-band', status: 'OPEN' } })).toBe(1);
  });

  it('opens one deviation when two recomputes race on the same new finding', async () => {
    const batch = await newBatch();
    const results = await Promise.all([1, 2, 3, 4].map(() => repo.openOrRefresh(finding(batch.batchId), batch)));
    expect(results.filter((r) => r?.kind === 'opened')).toHaveLength(1);
    const rows = await prisma.deviation.findMany({ where: { batchId: batch.batchId } });
    expect(rows).toHaveLength(1);
    expect(await prisma.deviationAudit.count({ where: { deviationId: rows[0].id } })).toBe(1);
  });

  it('syncs a batch: opens new findings and clears vanished ones in one call', async () => {
    const batch = await newBatch();
    const f1 = finding(batch.batchId);
    const f2 = finding(batch.batchId, { rule: 'hold-min', dedupKey: `${batch.batchId}:hold-min`, channelId: null, severity: 'CRITICAL', message: 'Bath hold too short' });
    expect((await repo.syncFindings(batch, [f1, f2])).map((c) => c.kind)).toEqual(['opened', 'opened']);
    const second = await repo.syncFindings(batch, [f2]);
    expect(second.map((c) => `${c.rule}:${c.kind}`)).toEqual(['bath-band-excursion:cleared']);
  });
});

describe('DeviationRepository: transitions', () => {
  it('walks OPEN -> ACKNOWLEDGED -> DISPOSITIONED -> CLOSED with signer and audit rows', async () => {
    const batch = await newBatch();
    const opened = await repo.openOrRefresh(finding(batch.batchId), batch);
    const id = opened!.deviationId;
    const metallurgist = await userActor(['METALLURGIST']);
    const quality = await userActor(['QUALITY']);

    const ack = await repo.transition(id, { type: 'ACKNOWLEDGE', reason: 'looking at the bath log' }, metallurgist);
    expect(ack.ok && ack.deviation).toMatchObject({ status: 'ACKNOWLEDGED', acknowledgedById: (metallurgist as { userId: string }).userId, version: 1 });
    const disp = await repo.transition(id, { type: 'DISPOSITION', disposition: 'USE_AS_IS', reason: 'hardness 388 HBW inside the band' }, quality);
    expect(disp.ok && disp.deviation).toMatchObject({
      status: 'DISPOSITIONED',
      disposition: 'USE_AS_IS',
      dispositionReason: 'hardness 388 HBW inside the band',
      signer: 'quality signer',
      dispositionedById: (quality as { userId: string }).userId,
    });
    const close = await repo.transition(id, { type: 'CLOSE' }, quality);
    expect(close.ok && close.change).toMatchObject({ kind: 'transitioned', status: 'CLOSED' });

    const full = await repo.get(id);
    expect(full?.audits.map((a) => [a.action, a.fromStatus, a.toStatus, a.actorKind, a.actorUserId])).toEqual([
      ['OPEN', null, 'OPEN', 'SYSTEM', null],
      ['ACKNOWLEDGE', 'OPEN', 'ACKNOWLEDGED', 'USER', (metallurgist as { userId: string }).userId],
      ['DISPOSITION', 'ACKNOWLEDGED', 'DISPOSITIONED', 'USER', (quality as { userId: string }).userId],
      ['CLOSE', 'DISPOSITIONED', 'CLOSED', 'USER', (quality as { userId: string }).userId],
    ]);
    expect(full?.audits[2]).toMatchObject({ disposition: 'USE_AS_IS', reason: 'hardness 388 HBW inside the band' });
    expect(full?.line.code).toMatch(/^L-/);
  });

  it('refuses without writing: wrong role, wrong state, stale version, unknown id', async () => {
    const batch = await newBatch();
    const id = (await repo.openOrRefresh(finding(batch.batchId), batch))!.deviationId;
    const metallurgist = await userActor(['METALLURGIST']);
    const quality = await userActor(['QUALITY']);
    expect(await repo.transition(id, { type: 'DISPOSITION', disposition: 'SCRAP', reason: 'parts cracked' }, metallurgist)).toMatchObject({ ok: false, code: 'forbidden' });
    expect(await repo.transition(id, { type: 'CLOSE' }, quality)).toMatchObject({ ok: false, code: 'conflict' });
    expect(await repo.transition(id, { type: 'ACKNOWLEDGE' }, quality, { expectedVersion: 7 })).toMatchObject({ ok: false, code: 'conflict' });
    expect(await repo.transition('00000000-0000-4000-8000-000000000000', { type: 'ACKNOWLEDGE' }, quality)).toMatchObject({ ok: false, code: 'not-found' });
    expect(await prisma.deviationAudit.count({ where: { deviationId: id } })).toBe(1);
    expect(await prisma.deviation.findUniqueOrThrow({ where: { id } })).toMatchObject({ status: 'OPEN', version: 0 });
  });

  it('lets exactly one of two simultaneous acknowledgements through (row lock)', async () => {
    const batch = await newBatch();
    const id = (await repo.openOrRefresh(finding(batch.batchId), batch))!.deviationId;
    const a = await userActor(['METALLURGIST']);
    const b = await userActor(['QUALITY']);
    const results = await Promise.all([repo.transition(id, { type: 'ACKNOWLEDGE' }, a), repo.transition(id, { type: 'ACKNOWLEDGE' }, b)]);
    expect(results.filter((r) => r.ok)).toHaveLength(1);
    expect(results.filter((r) => !r.ok && r.code === 'conflict')).toHaveLength(1);
    expect(await prisma.deviationAudit.count({ where: { deviationId: id, action: 'ACKNOWLEDGE' } })).toBe(1);
  });

  it('keeps the audit trail append-only (the database refuses an edit)', async () => {
    const batch = await newBatch();
    const id = (await repo.openOrRefresh(finding(batch.batchId), batch))!.deviationId;
    const [row] = await audits(id);
    await expect(prisma.deviationAudit.update({ where: { id: row.id }, data: { reason: 'rewritten' } })).rejects.toThrow();
  });
});

describe('DeviationRepository: list', () => {
  it('filters by line, batch, product, severity, status, rule and time, and pages newest first without repeats', async () => {
    const batch = await newBatch();
    const rules = ['channel-gap', 'hold-max', 'transfer-time', 'signal-flatline', 'hold-min'];
    for (const [i, rule] of rules.entries()) {
      await repo.openOrRefresh(
        finding(batch.batchId, { rule, dedupKey: `${batch.batchId}:${rule}`, channelId: null, severity: i % 2 === 0 ? 'MAJOR' : 'CRITICAL' }),
        batch,
      );
    }
    const all = await repo.list({ batchId: batch.batchId, limit: 2 });
    expect(all.total).toBe(5);
    const seen: string[] = all.items.map((d) => d.rule);
    let next = all.next;
    while (next) {
      const page = await repo.list({ batchId: batch.batchId, limit: 2, after: next });
      seen.push(...page.items.map((d) => d.rule));
      next = page.next;
    }
    expect(seen).toEqual([...rules].reverse());

    expect((await repo.list({ batchId: batch.batchId, severity: ['CRITICAL'], limit: 50 })).items.map((d) => d.rule).sort()).toEqual(['hold-max', 'signal-flatline']);
    expect((await repo.list({ batchId: batch.batchId, rule: ['hold-min', 'channel-gap'], limit: 50 })).total).toBe(2);
    expect((await repo.list({ lineId: plant.lineId, productSpecId: plant.specId, status: ['CLOSED'], batchId: batch.batchId, limit: 50 })).total).toBe(0);
    expect((await repo.list({ batchId: batch.batchId, from: new Date(Date.now() + 60_000), limit: 50 })).total).toBe(0);
    expect((await repo.list({ batchId: batch.batchId, to: new Date(Date.now() + 60_000), limit: 50 })).total).toBe(5);
    expect(all.items[0]).toMatchObject({ batch: { code: expect.stringMatching(/^LOAD-/) }, channel: null });
  });
});
