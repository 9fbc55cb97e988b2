import { newIdempotencyKey } from '../api/client.js';
import type { Deviation, DeviationWithAudit, Disposition } from '../api/types.js';
import type { AppContext } from '../app/context.js';
import { deviationActions } from '../lib/deviation-actions.js';
import { fmtDisposition, fmtRule } from '../lib/format.js';
import { formatDateTime } from '../lib/time.js';
import { button, field, h, link, replace } from './dom.js';
import { okBox, releaseCaution, showError } from './notice.js';
import { facts, severityChip, statusChip } from './widgets.js';

/**
 * One deviation: what happened (message and the numbers behind it), its audit trail oldest first, and
 * the actions the signed-in person may take. Actions the role may not take are shown disabled with the
 * reason, so a metallurgist sees that a disposition exists and who signs it. The API has the last word
 * (403/409), and its answer is shown as it comes.
 */

const DISPOSITIONS: Array<{ value: Disposition; label: string; hint: string }> = [
  { value: 'USE_AS_IS', label: 'Use as is', hint: 'Accept unchanged. Automotive customers must authorise this first.' },
  { value: 'RETREAT', label: 'Re-treat', hint: 'Re-austenitize and austemper again, where spec and customer allow; re-verify afterwards.' },
  { value: 'SCRAP', label: 'Scrap', hint: 'Destroy; make the parts unusable before disposal.' },
  { value: 'CONCESSION', label: 'Ship under customer concession', hint: 'Needs the customer\u2019s written permit number; label every container.' },
];

export function deviationPanel(ctx: AppContext, deviation: DeviationWithAudit, onChanged: (d: Deviation) => void, flash?: string): HTMLElement {
  const zone = ctx.plantZone;
  const messages = h('div', { attrs: { 'aria-live': 'polite' } }, flash ? okBox(flash) : null);
  const actions = deviationActions(deviation.status, ctx.roles);
  const can = (a: string) => actions.find((x) => x.action === a)!;

  const detailRows = Object.entries(deviation.details ?? {})
    .filter(([, v]) => v !== null && v !== undefined && typeof v !== 'object')
    .map(([k, v]) => [humanKey(k), String(v)] as [string, string]);

  const audit = h(
    'table',
    { class: 'audit' },
    h('caption', null, 'Audit trail (oldest first; entries are never changed or removed)'),
    h('thead', null, h('tr', null, h('th', { attrs: { scope: 'col' } }, `When (${zone})`), h('th', { attrs: { scope: 'col' } }, 'Action'), h('th', { attrs: { scope: 'col' } }, 'By'), h('th', { attrs: { scope: 'col' } }, 'Status'), h('th', { attrs: { scope: 'col' } }, 'Reason / disposition'))),
    h(
      'tbody',
      null,
      ...deviation.audits.map((a) =>
        h(
          'tr',
          null,
          h('td', { class: 'nowrap' }, formatDateTime(a.at, zone, true)),
          h('td', null, a.action.toLowerCase()),
          h('td', null, a.actorKind === 'SYSTEM' ? `${a.actor} (system)` : a.actor),
          h('td', { class: 'nowrap' }, a.fromStatus ? `${a.fromStatus.toLowerCase()} → ` : '', a.toStatus.toLowerCase()),
          h('td', null, a.disposition ? `${fmtDisposition(a.disposition)}: ` : '', a.reason ?? ''),
        ),
      ),
    ),
  );

  // --- acknowledge -------------------------------------------------------------------------------
  const ackReason = h('input', { attrs: { type: 'text', maxlength: 1000, placeholder: 'optional note' } });
  const ack = can('ACKNOWLEDGE');
  const ackForm = ack.applies
    ? h(
        'form',
        { class: 'action-form', on: { submit: (e) => { e.preventDefault(); void act('acknowledge', ackReason.value.trim() ? { reason: ackReason.value.trim() } : {}, 'Acknowledging the deviation'); } } },
        h('h3', null, 'Acknowledge'),
        h('p', { class: 'muted small' }, 'Says the deviation has been seen and is being looked at. It does not release anything.'),
        field('Note', ackReason),
        button('Acknowledge', () => undefined, { type: 'submit', disabled: !ack.permitted }),
        ack.permitted ? null : h('p', { class: 'why-not' }, `Not available: ${ack.why}.`),
      )
    : null;

  // --- disposition -------------------------------------------------------------------------------
  const disp = can('DISPOSITION');
  const choice = h('select', { attrs: { name: 'disposition', required: true } }, h('option', { props: { value: '' } }, 'Choose…'), ...DISPOSITIONS.map((d) => h('option', { props: { value: d.value } }, d.label)));
  const choiceHint = h('p', { class: 'hint' });
  const reason = h('textarea', { attrs: { name: 'reason', rows: 3, maxlength: 1000, required: true, placeholder: 'What was found and why this disposition (at least 5 characters)' } });
  const permit = h('input', { attrs: { type: 'text', name: 'dispositionRef', maxlength: 100, placeholder: 'customer permit / concession number' } });
  const permitField = field('Customer permit number', permit, 'Required for a concession (IATF 16949 8.7.1.1).');
  permitField.hidden = true;
  choice.addEventListener('change', () => {
    const d = DISPOSITIONS.find((x) => x.value === choice.value);
    choiceHint.textContent = d?.hint ?? '';
    permitField.hidden = choice.value !== 'CONCESSION';
  });
  const dispositionForm = disp.applies
    ? h(
        'form',
        {
          class: 'action-form disposition',
          on: {
            submit: (e) => {
              e.preventDefault();
              const body: Record<string, string> = { disposition: choice.value, reason: reason.value.trim() };
              if (choice.value === 'CONCESSION' && permit.value.trim()) body['dispositionRef'] = permit.value.trim();
              void act('disposition', body, 'Saving the disposition');
            },
          },
        },
        h('h3', null, 'Disposition'),
        releaseCaution('disposition'),
        field('Disposition', choice),
        choiceHint,
        field('Reason', reason),
        permitField,
        h('p', { class: 'muted small' }, `You sign as ${ctx.session?.user.displayName ?? '—'} (${ctx.session?.user.email ?? ''}); name, time and reason go into the audit trail.`),
        button('Sign disposition', () => undefined, { type: 'submit', kind: 'primary', disabled: !disp.permitted }),
        disp.permitted ? null : h('p', { class: 'why-not' }, `Not available: ${disp.why}.`),
      )
    : null;
  if (dispositionForm && !disp.permitted) for (const c of dispositionForm.querySelectorAll<HTMLInputElement>('select, textarea, input')) c.disabled = true;

  // --- close ---------------------------------------------------------------------------------------
  const close = can('CLOSE');
  const closeReason = h('input', { attrs: { type: 'text', maxlength: 1000, required: true, placeholder: 'e.g. parts scrapped, scrap note 4411' } });
  const closeForm = close.applies
    ? h(
        'form',
        { class: 'action-form', on: { submit: (e) => { e.preventDefault(); void act('close', { reason: closeReason.value.trim() }, 'Closing the deviation'); } } },
        h('h3', null, 'Close'),
        h('p', { class: 'muted small' }, 'Close once the disposition has been carried out.'),
        field('Reason', closeReason),
        button('Close deviation', () => undefined, { type: 'submit', disabled: !close.permitted }),
        close.permitted ? null : h('p', { class: 'why-not' }, `Not available: ${close.why}.`),
      )
    : null;

  async function act(kind: 'acknowledge' | 'disposition' | 'close', body: Record<string, string>, doing: string): Promise<void> {
    replace(messages);
    const buttons = [...panel.querySelectorAll<HTMLButtonElement>('form button')];
    for (const b of buttons) b.disabled = true;
    try {
      const updated = await ctx.api.post<Deviation>(`/v1/deviations/${deviation.id}/${kind}`, body, { idempotencyKey: newIdempotencyKey() });
      replace(messages, okBox(`Done: the deviation is now ${updated.status.toLowerCase()}.`));
      onChanged(updated);
    } catch (error) {
      showError(messages, error, doing);
      for (const b of buttons) b.disabled = b.dataset['locked'] === 'true';
    }
  }

  const panel = h(
    'article',
    { class: 'deviation-panel', dataset: { deviationId: deviation.id, status: deviation.status } },
    h('header', null, h('h2', null, fmtRule(deviation.rule), ' ', severityChip(deviation.severity), ' ', statusChip(deviation.status))),
    h('p', { class: 'dev-message' }, deviation.message),
    deviation.conditionPresent ? null : h('p', { class: 'notice info' }, 'The condition is no longer present in the data (a later recompute no longer finds it). The decision taken stands.'),
    facts([
      ['Line', deviation.line.code],
      ['Load', deviation.batch && deviation.batchId ? link(`/batches/${deviation.batchId}`, deviation.batch.code) : '—'],
      ['Channel', deviation.channel?.code ?? '—'],
      ...pyrometryEquipmentRow(deviation),
      [`Opened (${zone})`, formatDateTime(deviation.openedAt, zone, true)],
      ['Last evaluated', formatDateTime(deviation.lastEvaluatedAt, zone, true)],
      ['Disposition', deviation.disposition ? `${fmtDisposition(deviation.disposition)}${deviation.dispositionRef ? ` (permit ${deviation.dispositionRef})` : ''}` : '—'],
      ['Signed by', deviation.signer ? `${deviation.signer}, ${formatDateTime(deviation.dispositionedAt, zone)}` : '—'],
      ['Reason', deviation.dispositionReason ?? '—'],
    ]),
    detailRows.length > 0 ? h('details', { class: 'dev-details' }, h('summary', null, 'The numbers behind it'), facts(detailRows)) : null,
    audit,
    messages,
    h('div', { class: 'actions' }, ackForm, dispositionForm, closeForm),
    !ackForm && !dispositionForm && !closeForm ? h('p', { class: 'muted' }, `No action is possible from status ${deviation.status.toLowerCase()}.`) : null,
  );
  return panel;
}

const PYROMETRY_RULES = new Set(['suspect-product', 'equipment-overdue', 'sensor-expired', 'sensor-use-limit', 'equipment-record-incomplete']);

/** A pyrometry deviation names its furnace or bath; the row links to that equipment's pyrometry status. */
function pyrometryEquipmentRow(deviation: Deviation): Array<[string, HTMLElement]> {
  const id = deviation.details?.['equipmentId'];
  const code = deviation.details?.['equipmentCode'];
  if (!PYROMETRY_RULES.has(deviation.rule) || typeof id !== 'string') return [];
  return [['Equipment', link(`/pyrometry/equipment/${id}`, `${typeof code === 'string' ? code : 'equipment'}: pyrometry status`)]];
}

/** 'longestExcursionS' -> 'Longest excursion (s)' */
function humanKey(key: string): string {
  const units: Array<[RegExp, string]> = [[/WtPct$/, 'wt%'], [/MPa$/, 'MPa'], [/HV$/, 'HV'], [/Min$/, 'min'], [/C$/, '°C'], [/S$/, 's']];
  const hit = units.find(([re]) => re.test(key));
  const base = (hit ? key.replace(hit[0], '') : key).replace(/([A-Z])/g, ' $1').toLowerCase().trim();
  return `${base.charAt(0).toUpperCase()}${base.slice(1)}${hit ? ` (${hit[1]})` : ''}`;
}
