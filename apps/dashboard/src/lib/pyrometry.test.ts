import { describe, expect, it } from 'vitest';
import { ENDPOINT_MATRIX } from '../../../api/src/auth/endpoint-matrix.js';
import { computeDueItems, type DueItem as ComplianceDueItem, findPyrometryReference } from '@ausline/compliance';
import {
  calendarDaysBetween,
  compareDue,
  countByStatus,
  dueDateText,
  dueStatusLook,
  fmtRuleKey,
  nameIds,
  dueWhen,
  fmtCorrections,
  fmtDueKind,
  fmtUses,
  localizeInstants,
  plantDate,
  plantDueRows,
  PYROMETRY_ACTIONS,
  pyrometryPermission,
  sortDueItems,
  unconfirmedRules,
  worstStatus,
  type DueItemLike,
} from './pyrometry.js';

const item = (over: Partial<DueItemLike>): DueItemLike => ({ kind: 'sat', subjectId: 's1', dueDate: '2026-03-10', status: 'ok', causes: ['within-interval'], rules: [], ...over });

describe('due items on screen', () => {
  it('puts overdue first (failed or never passed before merely late), then no-rule, due soon, in date; earliest date first', () => {
    const items = [
      item({ subjectId: 'ok-late', dueDate: '2026-06-01' }),
      item({ subjectId: 'ok-early', dueDate: '2026-04-01' }),
      item({ subjectId: 'soon', status: 'due-soon', dueDate: '2026-03-05' }),
      item({ subjectId: 'late-2', status: 'overdue', dueDate: '2026-02-20', causes: ['past-due-date'] }),
      item({ subjectId: 'late-1', status: 'overdue', dueDate: '2026-01-31', causes: ['past-due-date'] }),
      item({ subjectId: 'never', status: 'overdue', dueDate: null, causes: ['never-passed'] }),
      item({ subjectId: 'norule', status: 'no-rule', dueDate: null, causes: ['no-rule'] }),
      item({ subjectId: 'ok-undated', dueDate: null }),
      // Failed last week; its nominal due date is still ahead, but it is not qualified now.
      item({ subjectId: 'failed', status: 'overdue', dueDate: '2026-04-20', causes: ['last-result-failed'] }),
    ];
    expect(sortDueItems(items).map((i) => i.subjectId)).toEqual(['never', 'failed', 'late-1', 'late-2', 'norule', 'soon', 'ok-early', 'ok-late', 'ok-undated']);
    // The input is left as it was.
    expect(items[0]!.subjectId).toBe('ok-late');
    // Same status and date: surveys before accuracy tests before calibrations.
    expect(compareDue(item({ kind: 'tus' }), item({ kind: 'sensor-calibration' }))).toBeLessThan(0);
    expect(compareDue(item({}), item({}))).toBe(0);
  });

  it('the worst status and the counts follow the same order', () => {
    expect(worstStatus([item({}), item({ status: 'due-soon' }), item({ status: 'no-rule' })])).toBe('no-rule');
    expect(worstStatus([item({}), item({ status: 'overdue' }), item({ status: 'no-rule' })])).toBe('overdue');
    expect(worstStatus([])).toBe('ok');
    expect(countByStatus([item({}), item({ status: 'overdue' }), item({ status: 'overdue' })])).toEqual({ overdue: 2, 'no-rule': 0, 'due-soon': 0, ok: 1 });
  });

  it('names statuses with a word and a shape (readable without colour) and kinds in plain words', () => {
    expect(dueStatusLook('overdue')).toEqual({ label: 'Overdue', icon: '■', cls: 'overdue' });
    expect(new Set((['ok', 'due-soon', 'overdue', 'no-rule'] as const).map((s) => dueStatusLook(s).icon)).size).toBe(4);
    expect(fmtDueKind('tus')).toBe('Uniformity survey');
    expect(fmtDueKind('sat')).toBe('Accuracy test');
    expect(fmtDueKind('something-new')).toBe('Something new');
  });

  it('says when, counted in plant calendar days', () => {
    expect(calendarDaysBetween('2026-02-27', '2026-03-02')).toBe(3);
    expect(calendarDaysBetween('2026-03-02', '2026-02-27')).toBe(-3);
    // Across the spring clock change in Europe (29 March 2026) a day is still a day.
    expect(calendarDaysBetween('2026-03-28', '2026-03-30')).toBe(2);
    expect(dueWhen(item({ status: 'overdue', dueDate: '2026-03-01', causes: ['past-due-date'] }), '2026-03-04')).toBe('overdue by 3 days');
    expect(dueWhen(item({ status: 'overdue', dueDate: '2026-03-03', causes: ['past-due-date'] }), '2026-03-04')).toBe('overdue by 1 day');
    expect(dueWhen(item({ status: 'due-soon', dueDate: '2026-03-04' }), '2026-03-04')).toBe('due today (last day in date)');
    expect(dueWhen(item({ dueDate: '2026-03-16' }), '2026-03-04')).toBe('in 12 days');
    expect(dueWhen(item({ status: 'overdue', dueDate: null, causes: ['never-passed'] }), '2026-03-04')).toBe('no passing result on record');
    expect(dueWhen(item({ status: 'overdue', dueDate: '2026-04-01', causes: ['last-result-failed'] }), '2026-03-04')).toBe('last result failed, not passed since');
    expect(dueWhen(item({ status: 'overdue', dueDate: '2026-03-01', causes: ['last-result-failed'] }), '2026-03-04')).toBe('last result failed, not passed since; also past its due date by 3 days');
    expect(dueDateText(item({ status: 'overdue', dueDate: '2026-04-01', causes: ['last-result-failed'] }))).toBe('now');
    expect(dueDateText(item({ status: 'overdue', dueDate: '2026-03-01', causes: ['past-due-date'] }))).toBe('2026-03-01');
    expect(dueDateText(item({ status: 'no-rule', dueDate: null, causes: ['no-rule'] }))).toBe('—');
    expect(dueWhen(item({ status: 'no-rule', dueDate: null, causes: ['no-rule'] }), '2026-03-04')).toMatch(/^interval not given/);
  });

  it('takes today at the plant, not in the browser or UTC', () => {
    // 23:30 UTC on 3 March is already 4 March in Berlin (UTC+1) and still 3 March in New York.
    const t = Date.UTC(2026, 2, 3, 23, 30);
    expect(plantDate(t, 'Europe/Berlin')).toBe('2026-03-04');
    expect(plantDate(t, 'America/New_York')).toBe('2026-03-03');
  });

  it('writes API instants in plant time and certificates as signed corrections', () => {
    expect(localizeInstants('survey failed at 2026-03-03T23:30:00.000Z and has not passed since', 'Europe/Berlin')).toBe('survey failed at 2026-03-04 00:30 and has not passed since');
    expect(localizeInstants('no instant here: 2026-03-03', 'Europe/Berlin')).toBe('no instant here: 2026-03-03');
    expect(fmtCorrections([{ atC: 1000, correctionC: 1.1 }, { atC: 300, correctionC: -0.4 }, { atC: 600, correctionC: 0 }])).toBe('−0.4 °C at 300 °C, ±0 °C at 600 °C, +1.1 °C at 1000 °C');
    expect(fmtCorrections([])).toBe('none');
    expect(fmtUses(12, 30)).toBe('12 of 30 uses');
    expect(fmtUses(1, 'unlimited')).toBe('1 use (no use limit)');
    expect(fmtUses(4, null)).toBe('4 uses (limit not given)');
    expect(fmtUses(undefined, 30)).toBeNull();
  });

  it('names ids by serial or code and rule keys in words, without the reference set the page names once', () => {
    const names = new Map([['4a15eb18-7af3-4a29-b5e5-3b1a6a707f9d', 'HV-B1-TC1']]);
    expect(nameIds('no interval for sensor 4A15EB18-7af3-4a29-b5e5-3b1a6a707f9d in AMS2750G', names)).toBe('no interval for sensor HV-B1-TC1 in AMS2750G');
    expect(nameIds('survey of 8de7a3d1-b270-4695-813d-109377cb6b77 failed', names)).toBe('survey of 8de7a3d1 failed');
    const overlay = 'AMS2750G+overlay(Customer spec HT-7 (invented))';
    expect(fmtRuleKey(`${overlay} tusInterval class 5 type B`, ['AMS2750G', overlay])).toBe('survey interval class 5 type B');
    expect(fmtRuleKey('AMS2750G satDifferenceLimit class 2', ['AMS2750G'])).toBe('accuracy test limit class 2');
    expect(fmtRuleKey('CQI9_4 satInterval probe', ['AMS2750G'])).toBe('CQI9_4 accuracy test interval probe');
  });

  it('lists each unconfirmed reference value once, and never a confirmed one', () => {
    const a = { key: 'AMS2750G satDifferenceLimit class 2', value: '±1.7 °C', confirmed: false, note: 'seen for AMS2750 E only' };
    const b = { key: 'AMS2750G tusInterval class 2 type B', value: 'monthly', confirmed: true, note: '[S10]' };
    expect(unconfirmedRules([a, b, null, undefined, { ...a }])).toEqual([a]);
  });

  it('merges the line lists into one plant list, worst first, the shared test kit once (its strictest copy)', () => {
    const kitOk = item({ kind: 'sensor-calibration', subjectId: 'kit-1', dueDate: '2026-05-01' });
    const kitSoon = { ...kitOk, status: 'due-soon' as const };
    const rows = plantDueRows([
      { lineCode: 'AUS-2', equipment: [{ equipmentId: 'f2', equipmentCode: 'AUS-2-F', items: [item({ subjectId: 'a', status: 'overdue', dueDate: '2026-02-01' })] }], testKit: [kitOk] },
      { lineCode: 'AUS-1', equipment: [{ equipmentId: 'b1', equipmentCode: 'AUS-1-B', items: [item({ subjectId: 'b', dueDate: '2026-04-01' }), item({ subjectId: 'c', status: 'overdue', dueDate: null, causes: ['never-passed'] })] }], testKit: [kitSoon] },
    ]);
    expect(rows.map((r) => [r.equipmentCode, r.item.subjectId, r.item.status])).toEqual([
      ['AUS-1-B', 'c', 'overdue'],
      ['AUS-2-F', 'a', 'overdue'],
      ['Test kit', 'kit-1', 'due-soon'],
      ['AUS-1-B', 'b', 'ok'],
    ]);
    expect(rows.find((r) => r.equipmentCode === 'Test kit')!.equipmentId).toBeNull();
  });
});

describe('agrees with libs/compliance on what the API sends', () => {
  it('sorts the real due items of a furnace whose survey is overdue with the overdue survey first', () => {
    // A class 5 type B furnace under AMS 2750G; the survey interval is quarterly ([S10] via practice.md §1.1).
    const reference = findPyrometryReference('AMS2750', 'G')!;
    const record = {
      equipmentId: 'F1',
      furnaceClass: 5 as const,
      instrumentationType: 'B' as const,
      tusRequired: true,
      sensors: [{ sensorId: 'S1', use: 'control' as const, thermocoupleType: 'N' as const, expendable: false, installedAt: new Date('2026-05-05T08:00:00Z') }],
      instruments: [],
    };
    const now = new Date('2026-06-15T10:00:00Z');
    const history = {
      tests: [
        { kind: 'tus' as const, equipmentId: 'F1', at: new Date('2026-01-10T10:00:00Z'), passed: true },
        { kind: 'sat' as const, equipmentId: 'F1', sensorId: 'S1', at: new Date('2026-06-10T10:00:00Z'), passed: true },
      ],
      calibrations: [{ subject: 'sensor' as const, subjectId: 'S1', at: new Date('2026-05-05T08:00:00Z'), passed: true }],
      sensorUses: [],
    };
    const items: ComplianceDueItem[] = computeDueItems(record, history, now, reference, { timeZone: 'Europe/Berlin' });
    const json = JSON.parse(JSON.stringify(items)) as DueItemLike[];
    const sorted = sortDueItems(json);
    expect(sorted[0]).toMatchObject({ kind: 'tus', status: 'overdue', dueDate: '2026-04-10' });
    expect(dueWhen(sorted[0]!, plantDate(now.getTime(), 'Europe/Berlin'))).toBe('overdue by 66 days');
    // Values practice.md does not give come next ("no rule"), ahead of anything in date.
    expect(sorted.map((i) => i.status)).toEqual([...sorted.map((i) => i.status)].sort((a, b) => ['overdue', 'no-rule', 'due-soon', 'ok'].indexOf(a) - ['overdue', 'no-rule', 'due-soon', 'ok'].indexOf(b)));
    expect(sorted.at(-1)).toMatchObject({ kind: 'sensor-replacement', status: 'ok' });
    expect(unconfirmedRules(sorted.flatMap((i) => i.rules)).length).toBeGreaterThan(0);
    // Every status libs/compliance can send has a look.
    for (const i of json) expect(dueStatusLook(i.status).label).not.toBe('');
  });
});

describe('pyrometry actions offered on screen agree with the API\u2019s endpoint matrix', () => {
  it('each action names the roles its endpoint allows', () => {
    for (const [action, rule] of Object.entries(PYROMETRY_ACTIONS)) {
      const entry = ENDPOINT_MATRIX.find((e) => e.method === rule.method && e.path === rule.path);
      expect(entry, `${action}: ${rule.method} ${rule.path} in the matrix`).toBeDefined();
      expect([...((entry!.access as { roles?: readonly string[] }).roles ?? [])].sort(), action).toEqual([...rule.roles].sort());
    }
    // Surveys are entered under the same rule as accuracy tests.
    const survey = ENDPOINT_MATRIX.find((e) => e.method === 'POST' && e.path === '/v1/equipment/:id/uniformity-surveys')!;
    expect([...((survey.access as { roles?: readonly string[] }).roles ?? [])].sort()).toEqual([...PYROMETRY_ACTIONS['record-tests'].roles].sort());
  });

  it('says why a role may not', () => {
    expect(pyrometryPermission('overdue-sweep', ['QUALITY'])).toEqual({ permitted: true, why: null });
    expect(pyrometryPermission('overdue-sweep', ['METALLURGIST'])).toEqual({ permitted: false, why: 'needs the admin or quality role (you are metallurgist)' });
    expect(pyrometryPermission('maintain-records', ['QUALITY', 'METALLURGIST']).permitted).toBe(false);
    expect(pyrometryPermission('disposition', []).why).toBe('needs the quality role (you are without a role)');
  });
});
