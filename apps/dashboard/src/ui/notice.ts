import { describeError, type ErrorDescription } from '../api/client.js';
import { h, replace } from './dom.js';

/**
 * Messages in the page: an error box that says what failed, why and what to do, with the field-level
 * issues the API named; and short confirmations. role=alert makes screen readers announce errors.
 */

export function errorBox(description: ErrorDescription): HTMLElement {
  return h(
    'div',
    { class: 'notice error', attrs: { role: 'alert' } },
    h('strong', null, description.title),
    h('p', null, description.detail),
    description.issues.length > 0
      ? h('ul', { class: 'issues' }, ...description.issues.map((i) => h('li', null, h('code', null, i.path || '(whole request)'), ': ', i.message)))
      : null,
  );
}

export function showError(target: HTMLElement, error: unknown, doing: string): void {
  replace(target, errorBox(describeError(error, doing)));
}

export function okBox(text: string): HTMLElement {
  return h('div', { class: 'notice ok', attrs: { role: 'status' } }, text);
}

export function infoBox(...children: Array<Node | string>): HTMLElement {
  return h('div', { class: 'notice info' }, ...children);
}

/**
 * Cautions shown wherever a decision could send parts into service (practice.md §3: nonconforming
 * product must not reach service without the authority and the customer's permission). One wording per
 * caution: `full` where there is room (the load view), `short` for one line beside a value (the board).
 */
export const CAUTIONS = {
  prediction: {
    full: 'Predictions are model estimates, not test results. Release to the customer only on the lab results and inspections your control plan requires; an "at risk" or "nonconforming" verdict means hold the load for review.',
    short: 'A model estimate, not a test result.',
  },
  disposition: {
    full: '"Use as is", "re-treat" and "concession" can send nonconforming parts into service. Sign only with the authority to do so; automotive customers (IATF 16949 8.7.1.1) must authorise use-as-is and rework in writing first, and a concession needs their permit number. Scrap must be made unusable.',
    short: 'Can send nonconforming parts into service.',
  },
  hold: {
    full: 'The earliest safe end is an estimate at the temperature being logged. If the bath drifts, the time moves; do not pull the load earlier than it, and never rely on it to override the spec\u2019s minimum hold.',
    short: 'An estimate at the logged bath temperature; never pull before the spec\u2019s minimum hold.',
  },
} as const satisfies Record<string, { full: string; short: string }>;

export type CautionKind = keyof typeof CAUTIONS;

export function releaseCaution(kind: CautionKind): HTMLElement {
  return h('aside', { class: 'caution', attrs: { role: 'note', 'aria-label': 'Caution' } }, h('strong', null, 'Caution. '), CAUTIONS[kind].full);
}

/** The same caution in one line, for a place with room for a few words only. */
export function cautionLine(kind: CautionKind): HTMLElement {
  return h('span', { class: 'caution-line', attrs: { role: 'note' } }, '⚠ ', CAUTIONS[kind].short);
}

/** Safety notes for anyone at the bath (practice.md §2.7); shown on the live board and batch view. */
export function bathSafetyNotes(): HTMLElement {
  return h(
    'details',
    { class: 'safety' },
    h('summary', null, 'Salt bath safety'),
    h(
      'ul',
      null,
      h('li', null, 'Water is the main danger: wet, oily or dirty parts, baskets, fixtures or thermocouples can cause a steam explosion that throws molten salt. Hollow parts and blind holes trap water. Preheat and dry everything before it goes in.'),
      h('li', null, 'Never mix salts: cyanide with nitrate can decompose explosively; oil, wood or paper in nitrate burn; aluminium or magnesium alloys can react explosively with molten nitrate.'),
      h('li', null, 'Never overheat a nitrate bath. The independent, hard-wired over-temperature cut-out is the protection; this screen only reports and never controls heaters, dosing or interlocks.'),
      h('li', null, 'Salt on skin keeps burning until it freezes: wear the insulated jacket and trousers, long gloves, spats, goggles and full-face shield, and a helmet.'),
      h('li', null, 'Nitrate fumes release nitrogen oxides: keep hoods and exhaust running. Entering an emptied bath is confined-space entry.'),
    ),
  );
}
