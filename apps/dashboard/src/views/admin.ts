import { newIdempotencyKey } from '../api/client.js';
import type { ApiKeyView, CreatedApiKey, CreatedUser, Line, PublicUser, Spec, SpecVersion } from '../api/types.js';
import type { AppContext } from '../app/context.js';
import type { ViewFactory } from '../app/view.js';
import { fmtLimits, fmtMin, fmtS, fmtVolPct } from '../lib/format.js';
import { formatDateTime } from '../lib/time.js';
import { button, field, h, link, replace, select } from '../ui/dom.js';
import { infoBox, okBox, showError } from '../ui/notice.js';
import { facts, loading } from '../ui/widgets.js';

/**
 * Plant set-up and product specs. Lines, equipment, channels, API keys and users are for admins; product
 * specs (create, new version, approve) for quality; everyone signed in may read lines and specs. A
 * new API key or a generated password is shown once, at creation, and never again.
 */

type Tab = 'lines' | 'keys' | 'users' | 'specs';
const TABS: Array<{ id: Tab; label: string }> = [
  { id: 'lines', label: 'Lines, equipment, channels' },
  { id: 'keys', label: 'API keys' },
  { id: 'users', label: 'Users' },
  { id: 'specs', label: 'Product specs' },
];

const QUANTITIES = ['TEMPERATURE_C', 'AGITATION_RPM', 'LEVEL_MM', 'WATER_CONTENT_PCT', 'CARBON_POTENTIAL_PCT'];
const CHANNEL_ROLES = ['BATH_TC', 'FURNACE_ZONE', 'LOAD_TC', 'BATH_AGITATION', 'BATH_LEVEL', 'BATH_WATER', 'FURNACE_ATMOSPHERE', 'OTHER'];

export const adminView: ViewFactory = (ctx, route) => {
  const tab = (TABS.find((t) => t.id === route.query.get('tab'))?.id ?? (ctx.hasRole('ADMIN') ? 'lines' : 'specs')) as Tab;
  const body = h('div', { class: 'tab-body', attrs: { role: 'region', 'aria-label': TABS.find((t) => t.id === tab)!.label } });
  const el = h(
    'section',
    { class: 'admin' },
    h('div', { class: 'page-head' }, h('h1', null, 'Plant & specs')),
    h('nav', { class: 'tabs', attrs: { 'aria-label': 'Sections' } },
      ...TABS.map((t) => h('a', { attrs: { href: `#/admin?tab=${t.id}`, 'aria-current': t.id === tab ? 'page' : undefined } }, t.label))),
    body,
  );
  const render = { lines: linesTab, keys: keysTab, users: usersTab, specs: specsTab }[tab];
  render(ctx, body);
  return { el, title: 'Plant & specs' };
};

// --- lines ------------------------------------------------------------------------------------------

function linesTab(ctx: AppContext, body: HTMLElement): void {
  const list = h('div', null, loading());
  const msg = h('div', { attrs: { 'aria-live': 'polite' } });
  const isAdmin = ctx.hasRole('ADMIN');
  replace(body, msg, list, isAdmin ? h('div', { class: 'forms' }) : infoBox('Only admins change the plant structure.'));
  const forms = body.querySelector<HTMLElement>('.forms');

  async function refresh(): Promise<void> {
    try {
      const lines = await ctx.lines(true);
      replace(list, lines.length === 0 ? infoBox('No lines yet.') : h('div', { class: 'line-list' }, ...lines.map(lineBlock)));
      if (forms) renderForms(lines);
    } catch (error) {
      showError(list, error, 'Reading lines');
    }
  }

  function lineBlock(line: Line): HTMLElement {
    return h('section', { class: 'card' },
      h('h2', null, `${line.code} `, h('span', { class: 'muted' }, line.name)),
      facts([['Time zone', line.timeZone], ['Bath h by agitation', line.hCoefficientByAgitation ? Object.entries(line.hCoefficientByAgitation).map(([k, v]) => `${k} ${v} W/(m²·K)`).join(', ') : 'not set']]),
      line.equipment.length === 0 ? h('p', { class: 'muted' }, 'No equipment yet.') :
        h('table', { class: 'compact' },
          h('thead', null, h('tr', null, ...['Equipment', 'Kind', 'Channels (code: quantity, role)'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
          h('tbody', null, ...line.equipment.map((e) => h('tr', null, h('td', null, `${e.code} (${e.name}) `, link(`/pyrometry/equipment/${e.id}`, 'pyrometry')), h('td', null, e.kind.toLowerCase()),
            h('td', null, e.channels.length === 0 ? '—' : e.channels.map((c) => `${c.code}: ${c.quantity}, ${c.role}`).join(' · ')))))));
  }

  function renderForms(lines: Line[]): void {
    const code = h('input', { attrs: { required: true, maxlength: 64 } });
    const name = h('input', { attrs: { required: true, maxlength: 200 } });
    const tz = h('input', { props: { value: ctx.plantZone }, attrs: { required: true } });
    const lineForm = h('form', { class: 'card form', on: { submit: (e) => { e.preventDefault(); void post('/v1/lines', { code: code.value.trim(), name: name.value.trim(), timeZone: tz.value.trim() }, 'Creating the line'); } } },
      h('h2', null, 'New line'), field('Code', code), field('Name', name), field('Time zone (IANA)', tz), button('Create line', () => undefined, { kind: 'primary', type: 'submit' }));

    const eqLine = select(lines.map((l) => ({ value: l.id, label: l.code })), lines[0]?.id ?? '');
    const eqKind = select([{ value: 'FURNACE', label: 'Furnace' }, { value: 'BATH', label: 'Salt bath' }], 'BATH');
    const eqCode = h('input', { attrs: { required: true, maxlength: 64 } });
    const eqName = h('input', { attrs: { required: true, maxlength: 200 } });
    const eqForm = h('form', { class: 'card form', on: { submit: (e) => { e.preventDefault(); void post(`/v1/lines/${eqLine.value}/equipment`, { kind: eqKind.value, code: eqCode.value.trim(), name: eqName.value.trim() }, 'Adding the equipment'); } } },
      h('h2', null, 'Add equipment'), field('Line', eqLine), field('Kind', eqKind), field('Code', eqCode, 'unique in the plant'), field('Name', eqName), button('Add equipment', () => undefined, { kind: 'primary', type: 'submit', disabled: lines.length === 0 }));

    const equipment = lines.flatMap((l) => l.equipment.map((e) => ({ value: e.id, label: `${l.code} / ${e.code}` })));
    const chEq = select(equipment, equipment[0]?.value ?? '');
    const chCode = h('input', { attrs: { required: true, maxlength: 64, placeholder: 'tc1, zone1 …' } });
    const chQty = select(QUANTITIES.map((q) => ({ value: q, label: q })), 'TEMPERATURE_C');
    const chRole = select(CHANNEL_ROLES.map((r) => ({ value: r, label: r })), 'BATH_TC');
    const chForm = h('form', { class: 'card form', on: { submit: (e) => { e.preventDefault(); void post(`/v1/equipment/${chEq.value}/channels`, { code: chCode.value.trim(), quantity: chQty.value, role: chRole.value }, 'Adding the channel'); } } },
      h('h2', null, 'Add channel'), field('Equipment', chEq), field('Code', chCode, 'as the controller sends it'), field('Quantity', chQty), field('Role', chRole), button('Add channel', () => undefined, { kind: 'primary', type: 'submit', disabled: equipment.length === 0 }));
    replace(forms!, lineForm, eqForm, chForm);
  }

  async function post(path: string, payload: unknown, doing: string): Promise<void> {
    replace(msg);
    try {
      await ctx.api.post(path, payload);
      replace(msg, okBox(`${doing}: done.`));
      await refresh();
    } catch (error) {
      showError(msg, error, doing);
    }
  }

  void refresh();
}

// --- API keys ---------------------------------------------------------------------------------------

function keysTab(ctx: AppContext, body: HTMLElement): void {
  if (!ctx.hasRole('ADMIN')) {
    replace(body, infoBox('Only admins see and manage API keys.'));
    return;
  }
  const msg = h('div', { attrs: { 'aria-live': 'polite' } });
  const once = h('div');
  const list = h('div', null, loading());
  const formSlot = h('div');
  replace(body, once, msg, formSlot, list);
  let equipment: Array<{ id: string; label: string }> = [];

  async function refresh(): Promise<void> {
    try {
      const [keys, lines] = await Promise.all([ctx.api.get<ApiKeyView[]>('/v1/api-keys'), ctx.lines()]);
      equipment = lines.flatMap((l) => l.equipment.map((e) => ({ id: e.id, label: `${l.code} / ${e.code} (${e.kind.toLowerCase()})` })));
      const name = new Map(equipment.map((e) => [e.id, e.label]));
      renderForm();
      replace(list, keys.length === 0 ? infoBox('No API keys yet.') : h('table', { class: 'list' },
        h('thead', null, h('tr', null, ...['Prefix', 'Label', 'Scope', 'Equipment', `Created (${ctx.plantZone})`, 'State', ''].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...keys.map((k) => h('tr', { class: k.revokedAt ? 'revoked' : '' },
          h('td', null, h('code', null, k.prefix)), h('td', null, k.label), h('td', null, k.scope.toLowerCase()),
          h('td', null, k.equipmentIds.map((id) => name.get(id) ?? id).join(', ') || '—'),
          h('td', null, formatDateTime(k.createdAt, ctx.plantZone)),
          h('td', null, k.revokedAt ? `revoked ${formatDateTime(k.revokedAt, ctx.plantZone)}` : 'active'),
          h('td', null, k.revokedAt ? null : button('Revoke', () => void revoke(k), { kind: 'danger' })))))));
    } catch (error) {
      showError(list, error, 'Reading API keys');
    }
  }

  function renderForm(): void {
    const label = h('input', { attrs: { required: true, maxlength: 200, placeholder: 'e.g. Bath 2 controller' } });
    const scope = select([{ value: 'EQUIPMENT', label: 'Controller (equipment)' }, { value: 'LAB', label: 'Lab' }], 'EQUIPMENT');
    const boxes = h('fieldset', { class: 'checks' }, h('legend', null, 'Equipment the controller may post for'),
      ...equipment.map((e) => h('label', null, h('input', { attrs: { type: 'checkbox', value: e.id, name: 'equipment' } }), ` ${e.label}`)));
    scope.addEventListener('change', () => (boxes.hidden = scope.value !== 'EQUIPMENT'));
    const form = h('form', { class: 'card form', on: { submit: (e) => {
      e.preventDefault();
      const ids = [...boxes.querySelectorAll<HTMLInputElement>('input:checked')].map((i) => i.value);
      void create({ label: label.value.trim(), scope: scope.value, ...(scope.value === 'EQUIPMENT' ? { equipmentIds: ids } : {}) });
    } } }, h('h2', null, 'New API key'), field('Label', label), field('Scope', scope), boxes, button('Create key', () => undefined, { kind: 'primary', type: 'submit' }));
    replace(formSlot, form);
  }

  async function create(payload: unknown): Promise<void> {
    replace(msg);
    replace(once);
    try {
      const created = await ctx.api.post<CreatedApiKey>('/v1/api-keys', payload);
      const input = h('input', { class: 'secret', attrs: { readonly: true, 'aria-label': 'New API key' }, props: { value: created.key } });
      const copy = button('Copy', () => {
        input.select();
        void navigator.clipboard?.writeText(created.key).then(() => (copy.textContent = 'Copied'), () => document.execCommand('copy'));
      });
      replace(once, h('div', { class: 'notice once', attrs: { role: 'alert' } },
        h('strong', null, `Key for "${created.label}" — copy it now. `), 'It is shown only this once; the server keeps only its hash. If it is lost, revoke it and create another.',
        h('div', { class: 'secret-row' }, input, copy)));
      input.focus();
      input.select();
      await refresh();
    } catch (error) {
      showError(msg, error, 'Creating the API key');
    }
  }

  async function revoke(k: ApiKeyView): Promise<void> {
    if (!window.confirm(`Revoke key ${k.prefix} (${k.label})? Controllers using it are refused from now on.`)) return;
    replace(msg);
    try {
      await ctx.api.post(`/v1/api-keys/${k.id}/revoke`);
      replace(msg, okBox(`Key ${k.prefix} revoked.`));
      await refresh();
    } catch (error) {
      showError(msg, error, 'Revoking the key');
    }
  }
  void refresh();
}

// --- users ------------------------------------------------------------------------------------------

function usersTab(ctx: AppContext, body: HTMLElement): void {
  if (!ctx.hasRole('ADMIN')) {
    replace(body, infoBox('Only admins manage users.'));
    return;
  }
  const msg = h('div', { attrs: { 'aria-live': 'polite' } });
  const once = h('div');
  const list = h('div', null, loading());
  const email = h('input', { attrs: { type: 'email', required: true, maxlength: 320 } });
  const name = h('input', { attrs: { required: true, maxlength: 200 } });
  const roles = h('fieldset', { class: 'checks' }, h('legend', null, 'Roles'),
    ...(['METALLURGIST', 'QUALITY', 'ADMIN'] as const).map((r) => h('label', null, h('input', { attrs: { type: 'checkbox', value: r } }), ` ${r.toLowerCase()}`)));
  const password = h('input', { attrs: { type: 'password', autocomplete: 'new-password', minlength: 12 } });
  const form = h('form', { class: 'card form', on: { submit: (e) => {
    e.preventDefault();
    const chosen = [...roles.querySelectorAll<HTMLInputElement>('input:checked')].map((i) => i.value);
    void create({ email: email.value.trim(), displayName: name.value.trim(), roles: chosen, ...(password.value ? { password: password.value } : {}) });
  } } }, h('h2', null, 'New user'), field('E-mail', email), field('Name as signed', name, 'printed as signer on dispositions'), roles, field('Password', password, 'leave empty to generate a one-time password'), button('Create user', () => undefined, { kind: 'primary', type: 'submit' }));
  replace(body, once, msg, form, list);

  async function refresh(): Promise<void> {
    try {
      const users = await ctx.api.get<PublicUser[]>('/v1/users');
      replace(list, h('table', { class: 'list' },
        h('thead', null, h('tr', null, ...['Name', 'E-mail', 'Roles', 'State', ''].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...users.map((u) => h('tr', { class: u.active ? '' : 'revoked' }, h('td', null, u.displayName), h('td', null, u.email), h('td', null, u.roles.map((r) => r.toLowerCase()).join(', ')), h('td', null, u.active ? 'active' : 'deactivated'),
          h('td', null, u.active && u.id !== ctx.session?.user.id ? button('Deactivate', () => void deactivate(u), { kind: 'danger' }) : null))))));
    } catch (error) {
      showError(list, error, 'Reading users');
    }
  }

  async function create(payload: unknown): Promise<void> {
    replace(msg);
    replace(once);
    try {
      const created = await ctx.api.post<CreatedUser>('/v1/users', payload);
      password.value = '';
      if (created.oneTimePassword) {
        const input = h('input', { class: 'secret', attrs: { readonly: true, 'aria-label': 'One-time password' }, props: { value: created.oneTimePassword } });
        replace(once, h('div', { class: 'notice once', attrs: { role: 'alert' } }, h('strong', null, `One-time password for ${created.user.email}: `), 'shown only now. Hand it over in person; the user changes it after signing in.', h('div', { class: 'secret-row' }, input)));
      } else {
        replace(msg, okBox(`User ${created.user.email} created.`));
      }
      await refresh();
    } catch (error) {
      showError(msg, error, 'Creating the user');
    }
  }

  async function deactivate(u: PublicUser): Promise<void> {
    if (!window.confirm(`Deactivate ${u.email}? Their sessions end at once.`)) return;
    try {
      await ctx.api.post(`/v1/users/${u.id}/deactivate`);
      replace(msg, okBox(`${u.email} deactivated.`));
      await refresh();
    } catch (error) {
      showError(msg, error, 'Deactivating the user');
    }
  }
  void refresh();
}

// --- product specs ----------------------------------------------------------------------------------

function specsTab(ctx: AppContext, body: HTMLElement): void {
  const isQuality = ctx.hasRole('QUALITY');
  const msg = h('div', { attrs: { 'aria-live': 'polite' } });
  const list = h('div', null, loading());
  const createSlot = h('div');
  replace(body, msg, isQuality ? createSlot : infoBox('Product specs are created and approved by quality; you can read them here.'), list);

  async function refresh(): Promise<void> {
    try {
      const specs = await ctx.specs(true);
      replace(list, specs.length === 0 ? infoBox('No product specs yet.') : h('div', null, ...specs.map(specBlock)));
      if (isQuality) renderCreate();
    } catch (error) {
      showError(list, error, 'Reading product specs');
    }
  }

  function renderCreate(): void {
    const code = h('input', { attrs: { required: true, maxlength: 64 } });
    const name = h('input', { attrs: { required: true, maxlength: 200 } });
    const material = select([{ value: 'STEEL', label: 'Steel' }, { value: 'DUCTILE_IRON', label: 'Ductile iron' }], 'STEEL');
    const desc = h('input', { attrs: { maxlength: 2000 } });
    replace(createSlot, h('form', { class: 'card form', on: { submit: (e) => { e.preventDefault(); void post('/v1/specs', { code: code.value.trim(), name: name.value.trim(), material: material.value, ...(desc.value.trim() ? { description: desc.value.trim() } : {}) }, 'Creating the spec'); } } },
      h('h2', null, 'New product spec'), field('Code', code), field('Name', name), field('Material', material), field('Description', desc), button('Create spec', () => undefined, { kind: 'primary', type: 'submit' })));
  }

  function specBlock(spec: Spec): HTMLElement {
    const latest = spec.versions[spec.versions.length - 1] ?? null;
    return h('section', { class: 'card spec', dataset: { specId: spec.id } },
      h('h2', null, `${spec.code} `, h('span', { class: 'muted' }, `${spec.name} · ${spec.material === 'STEEL' ? 'steel' : 'ductile iron'}`)),
      spec.description ? h('p', null, spec.description) : null,
      h('p', { class: 'small' }, link(`/calibration/${spec.id}`, 'Model calibration from lab results'), h('span', { class: 'muted' }, ': bias, spread and how much the predicted bands narrowed')),
      spec.versions.length === 0 ? h('p', { class: 'muted' }, 'No versions yet.') : h('div', null, ...spec.versions.slice().reverse().map((v) => versionBlock(spec, v))),
      isQuality ? newVersionForm(spec, latest) : null);
  }

  function versionBlock(spec: Spec, v: SpecVersion): HTMLElement {
    const w = v.processWindow;
    const c = v.acceptanceCriteria;
    return h('details', { class: `version ${v.status.toLowerCase()}`, props: { open: v.status === 'APPROVED' } },
      h('summary', null, `v${v.version} `, h('span', { class: `vstatus ${v.status.toLowerCase()}` }, v.status.toLowerCase()), h('span', { class: 'muted small' }, ` created ${formatDateTime(v.createdAt, ctx.plantZone)}${v.createdBy ? ` by ${v.createdBy}` : ''}${v.approvedAt ? `, approved ${formatDateTime(v.approvedAt, ctx.plantZone)} by ${v.approvedBy ?? '?'}` : ''}`)),
      facts([
        ['Austenitize', `${fmtLimits(w.austenitize.minTempC, w.austenitize.maxTempC, '°C')}, ${fmtLimits(w.austenitize.minMinutes, w.austenitize.maxMinutes, 'min')}`],
        ['Transfer', `≤ ${fmtS(w.maxTransferS)}`],
        ['Bath', `${fmtLimits(w.bath.minTempC, w.bath.maxTempC, '°C')}, excursions ≤ ${fmtS(w.bath.maxExcursionS)}, hold ${fmtLimits(w.bath.minHoldMin, w.bath.maxHoldMin, 'min')}`],
        ['Signals', `gaps ≤ ${fmtS(w.maxChannelGapS)}; flat line ${fmtS(w.flatline.minDurationS)} within ${w.flatline.epsilonC} °C; twin TCs ≤ ${w.twinTolerance.maxDiffC} °C apart`],
        ['Hardness', c.hardness ? fmtLimits(c.hardness.min, c.hardness.max, c.hardness.scale) : 'not specified'],
        ['Tensile', c.tensile ? `Rm ${fmtLimits(c.tensile.minTensileMPa, c.tensile.maxTensileMPa, 'MPa')}${c.tensile.minYieldMPa ? `, Rp0.2 ≥ ${c.tensile.minYieldMPa} MPa` : ''}${c.tensile.minElongationPct ? `, A ≥ ${c.tensile.minElongationPct} %` : ''}` : 'not specified'],
        ['Microstructure', [
          c.minBainiteFraction !== undefined ? `bainite ≥ ${fmtVolPct(c.minBainiteFraction, 0)}` : '',
          c.maxFreshMartensiteFraction !== undefined ? `fresh martensite ≤ ${fmtVolPct(c.maxFreshMartensiteFraction, 0)}` : '',
          c.maxBlockyAusteniteFraction !== undefined ? `blocky austenite ≤ ${fmtVolPct(c.maxBlockyAusteniteFraction, 0)}` : '',
          c.minFilmToBlockRatio !== undefined ? `film/block ≥ ${c.minFilmToBlockRatio}` : '',
          c.maxRetainedAusteniteFraction !== undefined ? `retained austenite ≤ ${fmtVolPct(c.maxRetainedAusteniteFraction, 0)}` : '',
        ].filter(Boolean).join('; ') || 'not specified'],
        ['Margins', `${c.minMsMarginC !== undefined ? `≥ ${c.minMsMarginC} °C above Ms` : ''}${c.minBsMarginC !== undefined ? `, ≥ ${c.minBsMarginC} °C below Bs` : ''}${c.minSiPlusAlWtPct !== undefined ? `, Si+Al ≥ ${c.minSiPlusAlWtPct} wt%` : ''}` || 'not specified'],
        ['Chemistry limits', Object.entries(v.chemistryLimits).map(([el, l]) => `${el} ${fmtLimits(l.minWtPct, l.maxWtPct, 'wt%', 3)}`).join('; ') || 'none'],
        ['Hold window', `${fmtMin(w.bath.minHoldMin)} to ${fmtMin(w.bath.maxHoldMin)}`],
      ]),
      isQuality && v.status === 'DRAFT' ? button(`Approve v${v.version}`, () => void approve(spec, v), { kind: 'primary' }) : null);
  }

  function newVersionForm(spec: Spec, latest: SpecVersion | null): HTMLElement {
    const template = latest
      ? { chemistryLimits: latest.chemistryLimits, processWindow: latest.processWindow, acceptanceCriteria: latest.acceptanceCriteria }
      : {
          chemistryLimits: { C: { minWtPct: 0.9, maxWtPct: 1.1 } },
          processWindow: {
            austenitize: { minTempC: 880, maxTempC: 910, minMinutes: 30 },
            maxTransferS: 20,
            bath: { minTempC: 360, maxTempC: 380, maxExcursionS: 120, minHoldMin: 60, maxHoldMin: 180 },
            maxChannelGapS: 30,
            flatline: { minDurationS: 600, epsilonC: 0.05 },
            plausible: { minTempC: 0, maxTempC: 1200, maxRateCPerS: 50 },
            twinTolerance: { maxDiffC: 8, minDurationS: 60 },
          },
          acceptanceCriteria: { hardness: { scale: 'HV', min: 400, max: 480 } },
        };
    const text = h('textarea', { class: 'json', attrs: { rows: 12, spellcheck: 'false', 'aria-label': `New version of ${spec.code} as JSON` }, props: { value: JSON.stringify(template, null, 2) } });
    return h('details', { class: 'new-version' }, h('summary', null, 'Add a new version (draft)'),
      h('p', { class: 'muted small' }, 'Edit the JSON: chemistry limits (wt%), process window (°C, min, s) and acceptance criteria. The API checks every field and names any that is wrong. A new version is a draft until approved.'),
      text,
      button('Save draft version', () => {
        let payload: unknown;
        try {
          payload = JSON.parse(text.value);
        } catch (error) {
          replace(msg, h('div', { class: 'notice error', attrs: { role: 'alert' } }, `The text is not valid JSON: ${(error as Error).message}`));
          return;
        }
        void post(`/v1/specs/${spec.id}/versions`, payload, 'Saving the spec version', newIdempotencyKey());
      }, { kind: 'primary' }));
  }

  async function approve(spec: Spec, v: SpecVersion): Promise<void> {
    if (!window.confirm(`Approve ${spec.code} v${v.version}? New loads of this product then run to it, and the version in force now is superseded.`)) return;
    await post(`/v1/specs/${spec.id}/versions/${v.version}/approve`, {}, 'Approving the version');
  }

  async function post(path: string, payload: unknown, doing: string, idempotencyKey?: string): Promise<void> {
    replace(msg);
    try {
      await ctx.api.post(path, payload, idempotencyKey ? { idempotencyKey } : {});
      replace(msg, okBox(`${doing}: done.`));
      await refresh();
    } catch (error) {
      showError(msg, error, doing);
    }
  }

  void refresh();
}
