import type {
  AccuracyTestRow,
  DueItem,
  EquipmentPyrometry,
  Line,
  LineDueList,
  PyrometryInstrument,
  PyrometrySensor,
  RuleUsed,
  SuspectTriggerRow,
  UniformitySurveyRow,
} from '../api/types.js';
import type { AppContext } from '../app/context.js';
import { setQuery } from '../app/router.js';
import type { ViewFactory } from '../app/view.js';
import { fmtC, fmtDisposition } from '../lib/format.js';
import {
  countByStatus,
  dueDateText,
  dueStatusLook,
  dueWhen,
  fmtCorrections,
  fmtDueKind,
  fmtRuleKey,
  fmtUses,
  localizeInstants,
  nameIds,
  plantDate,
  plantDueRows,
  pyrometryPermission,
  sortDueItems,
  unconfirmedRules,
  type DueRow,
  type DueStatus,
} from '../lib/pyrometry.js';
import { formatClock, formatDateTime } from '../lib/time.js';
import { button, h, link, replace, select, type Child } from '../ui/dom.js';
import { bathSafetyNotes, infoBox, okBox, showError } from '../ui/notice.js';
import { facts, loading, statusChip } from '../ui/widgets.js';

/**
 * Pyrometry (issue 8): the due list across the plant or one line, and the status of one furnace or bath
 * (record, sensors, instruments, latest tests, what is due, suspect product). Read-only apart from the
 * overdue check (admin or quality, as the API allows): admins keep records and admins or quality enter
 * tests through the API; quality dispositions suspect product in the deviation view. Every reference value behind a date or a verdict that is not confirmed
 * for the revision in use carries a flag, and the page says to confirm it against the plant's own copy.
 *
 * Routes: #/pyrometry[?lineId=] (due list), #/pyrometry/equipment/<id> (equipment status).
 */

export const pyrometryView: ViewFactory = (ctx, route) => (route.parts[1] === 'equipment' && route.parts[2] ? equipmentView(ctx, route.parts[2]) : dueListView(ctx, route.query));

// --- shared pieces ------------------------------------------------------------------------------------

function dueChip(status: DueStatus): HTMLElement {
  const look = dueStatusLook(status);
  return h('span', { class: `due-chip ${look.cls}`, dataset: { dueStatus: status } }, h('span', { attrs: { 'aria-hidden': 'true' } }, `${look.icon} `), look.label);
}

function verdictChip(verdict: 'pass' | 'fail' | 'invalid'): HTMLElement {
  const look = { pass: { icon: '●', text: 'Pass', cls: 'ok' }, fail: { icon: '■', text: 'Fail', cls: 'overdue' }, invalid: { icon: '?', text: 'Invalid (not counted)', cls: 'no-rule' } }[verdict];
  return h('span', { class: `due-chip ${look.cls}`, dataset: { verdict } }, h('span', { attrs: { 'aria-hidden': 'true' } }, `${look.icon} `), look.text);
}

/** The flag beside a value that is not confirmed for the revision in use. */
function unconfirmedChip(rule: { key: string; note: string }): HTMLElement {
  return h('span', { class: 'flag-unconfirmed', dataset: { unconfirmed: rule.key }, attrs: { title: rule.note } }, h('span', { attrs: { 'aria-hidden': 'true' } }, '⚑ '), 'unconfirmed');
}

function ruleCell(rules: readonly RuleUsed[], names: Names): Child {
  if (rules.length === 0) return '—';
  return rules.map((r) =>
    h('div', { class: 'rule-used' }, h('span', null, nameIds(r.value, names.ids)), ' ',
      h('span', { class: 'muted small', attrs: { title: nameIds(r.key, names.ids) } }, `(${nameIds(fmtRuleKey(r.key, names.referenceIds), names.ids)})`), r.confirmed ? null : [' ', unconfirmedChip(r)]));
}

/**
 * The plant-visible warning: which reference values on this screen nobody has confirmed for the revision,
 * and what to do about it.
 */
function unconfirmedNotice(rules: readonly RuleUsed[], standardText: string, names: Names): HTMLElement | null {
  if (rules.length === 0) return null;
  return h(
    'aside',
    { class: 'unconfirmed-notice', attrs: { role: 'note', 'aria-label': 'Unconfirmed reference values' }, dataset: { unconfirmedCount: String(rules.length) } },
    h('p', null, h('strong', null, h('span', { attrs: { 'aria-hidden': 'true' } }, '⚑ '), `${rules.length} reference value${rules.length === 1 ? '' : 's'} on this screen ${rules.length === 1 ? 'is' : 'are'} not confirmed`), ` for ${standardText}. `,
      'Confirm each against the plant\u2019s own copy of the standard (or the customer\u2019s requirement) before relying on the dates and verdicts that use it; an admin enters a confirmed or stricter value as a customer overlay on the equipment record.'),
    h('details', null, h('summary', null, 'Show the values and where they come from'),
      h('table', { class: 'compact', attrs: { 'aria-label': 'Unconfirmed reference values' } },
        h('thead', null, h('tr', null, ...['Reference value', 'Value used', 'Source and what to check'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...rules.map((r) => h('tr', null, h('td', { class: 'ref' }, nameIds(r.key, names.ids)), h('td', null, nameIds(r.value, names.ids)), h('td', { class: 'small' }, r.note)))))),
  );
}

function reportsOnlyNote(): HTMLElement {
  return h('p', { class: 'muted small' }, 'This screen reports; it does not stop equipment. Each batch is checked against the equipment\u2019s status when it starts and raises its own deviation; a failed or late test puts the product since the last pass under suspect-product deviations.');
}

function roleNote(ctx: AppContext): HTMLElement {
  const records = pyrometryPermission('maintain-records', ctx.roles);
  const tests = pyrometryPermission('record-tests', ctx.roles);
  const disposition = pyrometryPermission('disposition', ctx.roles);
  const can = [records.permitted ? 'keep the records' : null, tests.permitted ? 'enter tests (API or CSV import)' : null, disposition.permitted ? 'disposition suspect product (in Deviations)' : null].filter(Boolean);
  return h('p', { class: 'muted small role-note' },
    can.length > 0 ? `You can ${can.join(', ')}. ` : 'Read-only for you. ',
    'Records are kept by admins; tests are entered by admins or quality; suspect product is dispositioned by quality.');
}

function sweepButton(ctx: AppContext, equipmentId: string | null, out: HTMLElement, after: () => void): HTMLElement {
  const permission = pyrometryPermission('overdue-sweep', ctx.roles);
  const btn = button('Check for overdue items now', () => void run(), {
    disabled: !permission.permitted,
    title: 'Looks for tests and calibrations that have run past their due date and opens the suspect-product look-back for each (the worker also does this at every batch start).',
  });
  async function run(): Promise<void> {
    btn.disabled = true;
    try {
      const reply = await ctx.api.post<{ at: string; raised: Array<{ created: boolean; batches: unknown[] }> }>('/v1/pyrometry/overdue-sweep', equipmentId ? { equipmentId } : {});
      const created = reply.raised.filter((r) => r.created);
      const batches = created.reduce((n, r) => n + r.batches.length, 0);
      replace(out, okBox(`Checked at ${formatClock(reply.at, ctx.plantZone)}: ${created.length === 0 ? 'nothing new found overdue' : `${created.length} overdue item${created.length === 1 ? '' : 's'} found, ${batches} load${batches === 1 ? '' : 's'} put under suspect product`}.`));
      after();
    } catch (error) {
      showError(out, error, 'Checking for overdue items');
    } finally {
      btn.disabled = btn.dataset['locked'] === 'true';
    }
  }
  return h('div', { class: 'sweep' }, btn, permission.permitted ? null : h('p', { class: 'why-not' }, `Not available: ${permission.why}.`));
}

interface Names {
  sensors: Map<string, PyrometrySensor>;
  instruments: Map<string, PyrometryInstrument>;
  /** Every id a text from the API may name (sensor, instrument, equipment) → serial or code. */
  ids: Map<string, string>;
  /** Reference sets in use on the page; rule keys are shown without them. */
  referenceIds: string[];
}

function namesOf(sensors: readonly PyrometrySensor[], instruments: readonly PyrometryInstrument[], lines: readonly Line[], referenceIds: readonly string[]): Names {
  const ids = new Map<string, string>();
  for (const l of lines) for (const e of l.equipment) ids.set(e.id, e.code);
  for (const x of [...sensors, ...instruments]) ids.set(x.id, x.serial);
  return { sensors: new Map(sensors.map((x) => [x.id, x])), instruments: new Map(instruments.map((x) => [x.id, x])), ids, referenceIds: [...new Set(referenceIds)] };
}

/** A text from the API (reason, evidence) as people read it: plant time, serials and codes instead of ids. */
function apiText(text: string, names: Names, zone: string): string {
  return nameIds(localizeInstants(text, zone), names.ids);
}

function subjectName(item: { kind: string; subjectId: string }, names: Names, equipmentCode: string): string {
  if (item.kind === 'tus') return `${equipmentCode} work zone`;
  const sensor = names.sensors.get(item.subjectId);
  if (sensor) return `${sensor.serial} (${sensor.use} TC, type ${sensor.thermocoupleType})`;
  const instrument = names.instruments.get(item.subjectId);
  if (instrument) return `${instrument.serial} (${instrument.use} instrument)`;
  return names.ids.get(item.subjectId) ?? item.subjectId.slice(0, 8);
}

// --- due list --------------------------------------------------------------------------------------------

function dueListView(ctx: AppContext, query: URLSearchParams) {
  const lineSel = select([{ value: '', label: 'All lines' }], query.get('lineId') ?? '', () => {
    const q = new URLSearchParams();
    if (lineSel.value) q.set('lineId', lineSel.value);
    setQuery(q);
    void load();
  });
  lineSel.id = 'pyro-line';
  const messages = h('div', { attrs: { 'aria-live': 'polite' } });
  const body = h('div', null, loading('Reading what is due…'));
  const el = h(
    'section',
    { class: 'pyrometry-due' },
    h('div', { class: 'page-head' }, h('h1', null, 'Pyrometry due list'), h('span', { class: 'muted small' }, 'Due dates are plant calendar days; the work is in date through its due date.')),
    h('div', { class: 'filters row' }, h('div', { class: 'field' }, h('label', { attrs: { for: 'pyro-line' } }, 'Line'), lineSel), h('div', { class: 'filter-actions' }, sweepButton(ctx, null, messages, () => void load()))),
    messages,
    body,
  );
  let lines: Line[] = [];
  let disposed = false;

  async function load(): Promise<void> {
    el.dataset['loaded'] = 'false';
    try {
      if (lines.length === 0) {
        lines = await ctx.lines();
        for (const l of lines) lineSel.append(h('option', { props: { value: l.id, selected: query.get('lineId') === l.id } }, `${l.code} ${l.name}`));
        if (query.get('lineId')) lineSel.value = query.get('lineId')!;
      }
      const chosen = lines.filter((l) => !lineSel.value || l.id === lineSel.value);
      const [lists, sensors, instruments] = await Promise.all([
        Promise.all(chosen.map((l) => ctx.api.get<LineDueList>(`/v1/lines/${l.id}/pyrometry/due`))),
        ctx.api.get<PyrometrySensor[]>('/v1/pyrometry/sensors'),
        ctx.api.get<PyrometryInstrument[]>('/v1/pyrometry/instruments'),
      ]);
      if (disposed) return;
      const referenceIds = lists.flatMap((l) => [...l.equipment.map((e) => e.referenceId), ...l.testKit.flatMap((i) => i.referenceIds)]);
      render(lists, namesOf(sensors, instruments, lines, referenceIds));
      el.dataset['loaded'] = 'true';
    } catch (error) {
      showError(body, error, 'Reading the pyrometry due list');
    }
  }

  function render(lists: LineDueList[], names: Names): void {
    if (lists.length === 0) {
      replace(body, infoBox('No lines are set up yet.'));
      return;
    }
    const zone = lists[0]!.timeZone;
    const today = plantDate(Date.now(), zone);
    // Lines in other zones count their own calendar days.
    const todayOf = new Map(lists.map((l) => [l.lineCode, plantDate(Date.parse(l.at), l.timeZone)]));
    const rows = plantDueRows(lists);
    const counts = countByStatus(rows.map((r) => r.item));
    const unconfirmed = unconfirmedRules(rows.flatMap((r) => r.item.rules));
    const notEnrolled = lists.flatMap((l) => l.notEnrolled.map((e) => ({ ...e, lineCode: l.lineCode })));

    const summary = h('p', { class: 'due-summary', dataset: { overdue: String(counts.overdue) } },
      ...(['overdue', 'no-rule', 'due-soon', 'ok'] as const).flatMap((s, i) => [i > 0 ? ' · ' : null, h('span', { class: `count-${s}` }, h('strong', null, String(counts[s])), ` ${dueStatusLook(s).label.toLowerCase()}`)]),
      ` — today at the plant is ${today} (${zone}).`);

    const table = rows.length === 0
      ? infoBox('Nothing to show: no equipment on these lines has a pyrometry record yet.')
      : h('div', { class: 'table-wrap' }, h('table', { class: 'list due-table', attrs: { 'aria-label': 'Pyrometry due list, overdue first' } },
          h('thead', null, h('tr', null, ...['Status', 'Due (plant date)', 'When', 'What', 'Sensor, instrument or zone', 'Equipment', 'Line', 'Interval or limit used'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
          h('tbody', null, ...rows.map((r) => dueRow(r, names, todayOf.get(r.lineCode) ?? today)))));

    const overview = h('div', { class: 'equipment-overview' },
      h('h2', null, 'Equipment'),
      h('ul', { class: 'equipment-links' },
        ...lists.flatMap((l) => l.equipment.map((e) =>
          h('li', { dataset: { equipmentId: e.equipmentId } }, dueChip(sortDueItems(e.items)[0]?.status ?? 'ok'), ' ', link(`/pyrometry/equipment/${e.equipmentId}`, `${e.equipmentCode}`), h('span', { class: 'muted small' }, ` ${e.kind.toLowerCase()}, ${l.lineCode}, ${e.referenceId}`)))),
        ...notEnrolled.map((e) => h('li', { dataset: { equipmentId: e.equipmentId } }, h('span', { class: 'due-chip no-rule' }, 'No record'), ' ', link(`/pyrometry/equipment/${e.equipmentId}`, e.equipmentCode), h('span', { class: 'muted small' }, ` ${e.lineCode}: not enrolled, so its compliance cannot be shown`)))));

    replace(body, summary, unconfirmedNotice(unconfirmed, names.referenceIds.join(', ') || 'the standard in use', names), table, overview, roleNote(ctx), reportsOnlyNote());
  }

  function dueRow(r: DueRow<DueItem>, names: Names, today: string): HTMLElement {
    const i = r.item;
    const uses = fmtUses(i.usesSoFar, i.usesLimit);
    return h('tr', { class: `due-row due-${dueStatusLook(i.status).cls}`, dataset: { status: i.status, kind: i.kind, equipmentId: r.equipmentId ?? 'test-kit', subjectId: i.subjectId } },
      h('td', null, dueChip(i.status)),
      h('td', { class: 'nowrap' }, dueDateText(i)),
      h('td', null, dueWhen(i, today), uses ? h('div', { class: 'muted small' }, uses) : null),
      h('td', null, fmtDueKind(i.kind)),
      h('td', null, subjectName(i, names, r.equipmentCode)),
      h('td', { class: 'short' }, r.equipmentId ? link(`/pyrometry/equipment/${r.equipmentId}`, r.equipmentCode) : r.equipmentCode),
      h('td', { class: 'short' }, r.lineCode),
      h('td', null, ruleCell(i.rules, names)),
    );
  }

  const off = ctx.stream.onEvent((e) => {
    if (e.type === 'deviation.changed' && e.rule === 'suspect-product') void load();
  });
  void load();
  return {
    el,
    title: 'Pyrometry due list',
    dispose() {
      disposed = true;
      off();
    },
  };
}

// --- equipment status ---------------------------------------------------------------------------------------

function equipmentView(ctx: AppContext, equipmentId: string) {
  const zone = ctx.plantZone;
  const heading = h('h1', null, 'Equipment pyrometry');
  const messages = h('div', { attrs: { 'aria-live': 'polite' } });
  const body = h('div', null, loading('Reading the equipment\u2019s records…'));
  const el = h('section', { class: 'equipment-status' },
    h('div', { class: 'page-head' }, heading, link('/pyrometry', '← due list')),
    messages, body);
  let disposed = false;

  async function load(): Promise<void> {
    el.dataset['loaded'] = 'false';
    try {
      const [status, triggers, lines] = await Promise.all([
        ctx.api.get<EquipmentPyrometry>(`/v1/equipment/${equipmentId}/pyrometry`),
        ctx.api.get<SuspectTriggerRow[]>(`/v1/equipment/${equipmentId}/suspect-triggers`),
        ctx.lines(),
      ]);
      if (disposed) return;
      const line = lines.find((l) => l.id === status.equipment.lineId);
      const channels = new Map((line?.equipment.find((e) => e.id === equipmentId)?.channels ?? []).map((c) => [c.id, c.code]));
      const names = status.enrolled ? namesOf(status.sensors, status.instruments, lines, [status.reference.id]) : namesOf([], [], lines, []);
      render(status, triggers, channels, line?.code ?? '', names);
      el.dataset['loaded'] = 'true';
    } catch (error) {
      showError(body, error, 'Reading the equipment\u2019s pyrometry');
    }
  }

  function render(status: EquipmentPyrometry, triggers: SuspectTriggerRow[], channels: Map<string, string>, lineCode: string, names: Names): void {
    const eq = status.equipment;
    const isBath = eq.kind === 'BATH';
    replace(heading, `${eq.code} · ${eq.name}`, h('span', { class: 'muted small' }, ` ${isBath ? 'salt bath' : 'furnace'}, line ${lineCode}`));
    document.title = `${eq.code} pyrometry · Ausline`;
    el.dataset['equipmentKind'] = eq.kind;
    if (!status.enrolled) {
      replace(body,
        infoBox(`${eq.code} has no pyrometry record, so its compliance cannot be shown and its batches are not checked against it. An admin enters the record (class, instrumentation type, standard and revision${isBath ? ', and whether this bath is surveyed as a salt bath or counts as a controlled-temperature quench bath' : ''}).`),
        suspectCard(triggers, names, eq.code),
        roleNote(ctx),
        isBath ? bathSafetyNotes() : null);
      return;
    }
    const lineZone = status.timeZone;
    const today = plantDate(Date.parse(status.at), lineZone);
    const items = sortDueItems(status.dueItems);
    const record = status.record;
    const limitRules: RuleUsed[] = [
      ...status.recentAccuracyTests.map((t) => t.result.limit).filter((l): l is NonNullable<typeof l> => l !== null).map((l) => ({ key: l.key, value: l.text, confirmed: l.confirmed, note: l.note })),
      ...status.recentUniformitySurveys.map((s) => s.result.tolerance).filter((l): l is NonNullable<typeof l> => l !== null).map((l) => ({ key: l.key, value: l.text, confirmed: l.confirmed, note: l.note })),
    ];
    const unconfirmed = unconfirmedRules([...items.flatMap((i) => i.rules), ...limitRules]);
    const standardText = `${record.standard} ${record.revision}${status.reference.overlays.length ? ` with ${status.reference.overlays.join(', ')}` : ''}`;

    const compliance = h('div', { class: `compliance ${status.compliant ? 'ok' : 'bad'}`, attrs: { role: 'status' }, dataset: { compliant: String(status.compliant) } },
      h('strong', null, h('span', { attrs: { 'aria-hidden': 'true' } }, status.compliant ? '● ' : '■ '),
        status.compliant ? 'In compliance now: nothing overdue or failed.' : `Not in compliance now: ${status.findings.length} finding${status.findings.length === 1 ? '' : 's'}. Batches started now raise a deviation.`),
      status.findings.length > 0
        ? h('ul', null, ...status.findings.map((f) => h('li', null, `${fmtDueKind(f.itemKind)} — ${subjectName(f, names, eq.code)}: `, apiText(f.reason, names, zone))))
        : null);

    const recordCard = h('section', { class: 'card' }, h('h2', null, 'Record'),
      facts([
        ['Furnace class', String(record.furnaceClass)],
        ['Instrumentation type', record.instrumentationType],
        ['Accuracy test method', record.satMethod ?? 'not set (AMS 2750 keys tests by class)'],
        ['Standard', `${record.standard} revision ${record.revision}`],
        ['Reference set', status.reference.id],
        ['Customer requirement', record.customerOverlay ? record.customerOverlay.source : 'none entered'],
        ['Uniformity surveys', record.tusRequired ? (isBath ? 'required: surveyed as a salt bath' : 'required') : isBath ? 'not required: counted as a controlled-temperature quench bath (agree this with the customer)' : 'not required'],
        ['Limits stated in', record.limitUnit === 'F' ? '°F' : '°C'],
        ['Values in the set still to confirm', h('span', null, String(status.reference.unconfirmedValues), status.reference.unconfirmedValues > 0 ? [' ', unconfirmedChip({ key: status.reference.id, note: `${status.reference.unconfirmedValues} values of ${status.reference.id} are not confirmed for this revision; confirm against the plant's copy of the standard` })] : null)],
        ['Status as of', `${formatDateTime(status.at, zone)} (${zone})`],
      ]));

    const dueCard = h('section', { class: 'card' }, h('h2', null, 'Due and overdue'),
      items.length === 0 ? infoBox('Nothing to track yet: no sensors, instruments or surveys on record.') : h('div', { class: 'table-wrap' }, h('table', { class: 'list due-table', attrs: { 'aria-label': `What is due on ${eq.code}, overdue first` } },
        h('thead', null, h('tr', null, ...['Status', 'Due (plant date)', 'When', 'What', 'Sensor, instrument or zone', 'Last pass', 'Interval or limit used'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...items.map((i) => {
          const uses = fmtUses(i.usesSoFar, i.usesLimit);
          return h('tr', { class: `due-row due-${dueStatusLook(i.status).cls}`, dataset: { status: i.status, kind: i.kind, subjectId: i.subjectId } },
            h('td', null, dueChip(i.status)),
            h('td', { class: 'nowrap' }, dueDateText(i)),
            h('td', null, dueWhen(i, today), uses ? h('div', { class: 'muted small' }, uses) : null),
            h('td', null, fmtDueKind(i.kind)),
            h('td', null, subjectName(i, names, eq.code)),
            h('td', { class: 'nowrap' }, i.kind === 'sensor-replacement' || i.kind === 'sensor-expiry' ? '—' : i.lastPassAt ? formatDateTime(i.lastPassAt, zone) : 'never'),
            h('td', null, ruleCell(i.rules, names)));
        })))));

    replace(body,
      compliance,
      unconfirmedNotice(unconfirmed, standardText, names),
      h('div', { class: 'pyro-grid' }, suspectCard(triggers, names, eq.code), recordCard),
      dueCard,
      sensorsCard(status.sensors, items, channels, today),
      instrumentsCard(status.instruments, items, channels, today),
      testsCard(status.recentAccuracyTests, names),
      surveysCard(status.recentUniformitySurveys, names, isBath),
      h('div', { class: 'pyro-actions' }, sweepButton(ctx, eq.id, messages, () => void load())),
      roleNote(ctx),
      reportsOnlyNote(),
      isBath ? bathSafetyNotes() : null);
  }

  function suspectCard(triggers: SuspectTriggerRow[], names: Names, code: string): HTMLElement {
    const open = triggers.flatMap((t) => t.deviations).filter((d) => d.status === 'OPEN' || d.status === 'ACKNOWLEDGED');
    const card = h('section', { class: `card suspect ${open.length > 0 ? 'has-open' : ''}`, dataset: { openSuspect: String(open.length) } },
      h('h2', null, 'Suspect product', open.length > 0 ? [' ', h('span', { class: 'dev-count major' }, `${open.length} open`)] : null));
    if (triggers.length === 0) {
      card.append(h('p', { class: 'muted' }, 'No failed or late test has put product in doubt on this equipment.'));
      return card;
    }
    if (open.length > 0) {
      card.append(h('aside', { class: 'caution', attrs: { role: 'note', 'aria-label': 'Caution' } }, h('strong', null, 'Caution. '),
        'Loads processed since the last passing result are suspect: keep them on hold until quality has dispositioned each deviation below. Releasing suspect product to a customer needs the customer\u2019s agreement where the contract or IATF 16949 requires it.'));
    }
    for (const t of triggers) {
      const subject = subjectName({ kind: t.itemKind, subjectId: t.subjectId }, names, code);
      card.append(h('div', { class: 'trigger', dataset: { triggerId: t.id, triggerKind: t.kind } },
        h('h3', null, t.kind === 'failed-test' ? 'Failed' : 'Found overdue', ': ', fmtDueKind(t.itemKind), ' — ', subject),
        h('p', { class: 'small' }, apiText(t.evidence.summary ?? '', names, zone)),
        h('p', { class: 'muted small' }, `Look-back: loads on ${code} ${t.lastPassAt ? `after the last pass at ${formatDateTime(t.lastPassAt, zone)}` : 'since the records began (no pass on record)'}, up to ${formatDateTime(t.at, zone)}.`),
        t.deviations.length === 0
          ? h('p', { class: 'muted small' }, 'No load ran on this equipment in that window.')
          : h('table', { class: 'compact', attrs: { 'aria-label': `Suspect-product deviations of this ${t.kind === 'failed-test' ? 'failure' : 'late item'}` } },
              h('thead', null, h('tr', null, ...['Load', 'Deviation', 'Status', 'Disposition'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
              h('tbody', null, ...t.deviations.map((d) => h('tr', { dataset: { deviationStatus: d.status } },
                h('td', null, d.batchId ? link(`/batches/${d.batchId}`, d.batchCode ?? d.batchId.slice(0, 8)) : '—'),
                h('td', null, h('a', { attrs: { href: `#/deviations/${d.deviationId}` }, dataset: { deviationId: d.deviationId } }, 'Open the deviation')),
                h('td', null, statusChip(d.status)),
                h('td', null, fmtDisposition(d.disposition))))))));
    }
    return card;
  }

  function sensorsCard(list: PyrometrySensor[], items: DueItem[], channels: Map<string, string>, today: string): HTMLElement {
    const itemOf = (id: string, kind: string) => items.find((i) => i.subjectId === id && i.kind === kind);
    return h('section', { class: 'card' }, h('h2', null, 'Sensors'),
      list.length === 0 ? h('p', { class: 'muted' }, 'No sensors on record.') : h('div', { class: 'table-wrap' }, h('table', { class: 'list', attrs: { 'aria-label': 'Sensors' } },
        h('thead', null, h('tr', null, ...['Serial', 'Use, type', 'Channel', 'Certificate', 'Corrections', 'Installed', 'Uses and age', 'Expiry', 'Calibration due'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...list.map((s) => {
          const replacement = itemOf(s.id, 'sensor-replacement');
          const expiry = itemOf(s.id, 'sensor-expiry');
          const calibration = itemOf(s.id, 'sensor-calibration');
          return h('tr', { class: s.retiredAt ? 'revoked' : undefined, dataset: { sensorId: s.id } },
            h('td', { class: 'short' }, s.serial, s.retiredAt ? h('div', { class: 'muted small' }, `retired ${formatDateTime(s.retiredAt, zone)}`) : null),
            h('td', null, `${s.use}, type ${s.thermocoupleType}${s.expendable ? ', expendable' : ''}`),
            h('td', { class: 'short' }, s.channelId ? (channels.get(s.channelId) ?? s.channelId.slice(0, 8)) : '—'),
            h('td', null, s.calibrationCertificateRef ?? 'none', s.calibratedAt ? h('div', { class: 'muted small' }, formatDateTime(s.calibratedAt, zone)) : null),
            h('td', { class: 'small' }, fmtCorrections(s.calibrationPoints), h('div', { class: 'muted small' }, s.correctionMethod === 'nearest' ? 'nearest point' : 'linear between points')),
            h('td', { class: 'nowrap' }, formatDateTime(s.installedAt, zone)),
            h('td', null, replacement ? [dueChip(replacement.status), ' ', fmtUses(replacement.usesSoFar, replacement.usesLimit) ?? '', replacement.dueDate ? h('div', { class: 'small' }, `replace by age on ${replacement.dueDate} (${dueWhen(replacement, today)})`) : null] : `${s.usesSoFar ?? s.priorUses} uses`),
            h('td', null, expiry ? [dueChip(expiry.status), ' ', s.expiresOn ?? ''] : (s.expiresOn ?? '—')),
            h('td', null, calibration ? [dueChip(calibration.status), h('div', { class: 'small' }, calibration.dueDate ?? dueWhen(calibration, today))] : 'not required'));
        })))));
  }

  function instrumentsCard(list: PyrometryInstrument[], items: DueItem[], channels: Map<string, string>, today: string): HTMLElement {
    return h('section', { class: 'card' }, h('h2', null, 'Instruments'),
      list.length === 0 ? h('p', { class: 'muted' }, 'No instruments on record.') : h('div', { class: 'table-wrap' }, h('table', { class: 'list', attrs: { 'aria-label': 'Instruments' } },
        h('thead', null, h('tr', null, ...['Serial', 'Use', 'Channel', 'Stated accuracy', 'Certificate', 'Corrections', 'Calibration due'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...list.map((i) => {
          const calibration = items.find((x) => x.subjectId === i.id && x.kind === 'instrument-calibration');
          const acc = i.statedAccuracy;
          return h('tr', { class: i.retiredAt ? 'revoked' : undefined, dataset: { instrumentId: i.id } },
            h('td', { class: 'short' }, i.serial),
            h('td', null, i.use),
            h('td', { class: 'short' }, i.channelId ? (channels.get(i.channelId) ?? i.channelId.slice(0, 8)) : '—'),
            h('td', null, acc ? `±${acc.plusMinusC} °C${acc.pctOfReading ? ` or ${acc.pctOfReading} % of reading` : ''}` : 'not stated'),
            h('td', null, i.calibrationCertificateRef ?? 'none', i.calibratedAt ? h('div', { class: 'muted small' }, `calibrated ${formatDateTime(i.calibratedAt, zone)}`) : null),
            h('td', { class: 'small' }, fmtCorrections(i.calibrationPoints)),
            h('td', null, calibration ? [dueChip(calibration.status), h('div', { class: 'small' }, calibration.dueDate ? `${calibration.dueDate} (${dueWhen(calibration, today)})` : dueWhen(calibration, today))] : 'not required'));
        })))));
  }

  function limitCell(limit: { key: string; text: string; confirmed: boolean; note: string } | null, names: Names): Child {
    if (!limit) return 'no limit in the reference set';
    return [limit.text, ' ', h('span', { class: 'muted small', attrs: { title: limit.key } }, `(${fmtRuleKey(limit.key, names.referenceIds)})`), limit.confirmed ? null : [' ', unconfirmedChip(limit)]];
  }

  function testsCard(tests: AccuracyTestRow[], names: Names): HTMLElement {
    return h('section', { class: 'card' }, h('h2', null, 'Latest accuracy tests'),
      tests.length === 0 ? h('p', { class: 'muted' }, 'None on record.') : h('div', { class: 'table-wrap' }, h('table', { class: 'list', attrs: { 'aria-label': 'Latest accuracy tests, newest first' } },
        h('thead', null, h('tr', null, ...[`Tested (${zone})`, 'Sensor', 'Setpoint', 'System reads', 'Test sensor reads', 'Difference (corrected)', 'Allowed', 'Verdict'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...tests.map((t) => h('tr', { dataset: { verdict: t.verdict } },
          h('td', { class: 'nowrap' }, formatDateTime(t.testedAt, zone)),
          h('td', { class: 'short' }, names.sensors.get(t.sensorId)?.serial ?? t.sensorId.slice(0, 8)),
          h('td', { class: 'num' }, fmtC(t.setpointC)),
          h('td', { class: 'num' }, fmtC(t.instrumentReadingC, 2)),
          h('td', { class: 'num' }, fmtC(t.testSensorReadingC, 2)),
          h('td', { class: 'num' }, t.verdict === 'invalid' ? '—' : `${t.result.differenceC > 0 ? '+' : ''}${fmtC(t.result.differenceC, 2)}`),
          h('td', null, limitCell(t.result.limit, names)),
          h('td', null, verdictChip(t.verdict), t.result.problems.length ? h('div', { class: 'small warn' }, t.result.problems.join('; ')) : null)))))));
  }

  function surveysCard(surveys: UniformitySurveyRow[], names: Names, isBath: boolean): HTMLElement {
    return h('section', { class: 'card' }, h('h2', null, 'Latest uniformity surveys'),
      isBath
        ? h('aside', { class: 'caution', attrs: { role: 'note', 'aria-label': 'Caution' } }, h('strong', null, 'Caution. '),
            'Survey and test thermocouples, their sheaths and fixtures go into the salt only clean, dry and preheated: water on them can throw molten salt (see Salt bath safety below).')
        : null,
      surveys.length === 0 ? h('p', { class: 'muted' }, 'None on record.') : h('div', { class: 'table-wrap' }, h('table', { class: 'list', attrs: { 'aria-label': 'Latest uniformity surveys, newest first' } },
        h('thead', null, h('tr', null, ...[`Ended (${zone})`, 'Setpoint', 'Worst reading', 'Spread', 'Tolerance', 'Verdict'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...surveys.map((s) => h('tr', { dataset: { verdict: s.verdict } },
          h('td', { class: 'nowrap' }, formatDateTime(s.endedAt, zone)),
          h('td', { class: 'num' }, fmtC(s.setpointC)),
          h('td', null, s.result.worst ? `${s.result.worst.deviationC > 0 ? '+' : ''}${fmtC(s.result.worst.deviationC, 1)} at ${s.result.worst.locationId}` : '—'),
          h('td', { class: 'num' }, fmtC(s.result.spreadC, 1)),
          h('td', null, limitCell(s.result.tolerance, names)),
          h('td', null, verdictChip(s.verdict), s.result.problems.length ? h('div', { class: 'small warn' }, s.result.problems.join('; ')) : null)))))));
  }

  const off = ctx.stream.onEvent((e) => {
    if (e.type === 'deviation.changed' && e.rule === 'suspect-product') void load();
  });
  void load();
  return {
    el,
    title: 'Equipment pyrometry',
    dispose() {
      disposed = true;
      off();
    },
  };
}
