import type { ViewFactory } from '../app/view.js';
import { fmtC, fmtDisposition, fmtKg, fmtLimits, fmtMin, fmtNum, fmtRule, fmtS, fmtSection } from '../lib/format.js';
import { acceptanceMeasuredText, fmtAcceptanceCriterion, fmtAcceptanceVerdict, fmtAgainstPrediction, fmtLabKind, labResultText } from '../lib/lab-text.js';
import { criterionName, VERDICT_TEXT } from '../lib/prediction.js';
import { formatDateTime } from '../lib/time.js';
import { button, h, link, replace } from '../ui/dom.js';
import { showError } from '../ui/notice.js';
import { facts, loading } from '../ui/widgets.js';

/**
 * The certificate record of a batch or a lot (GET /v1/batches/:id/certificate, /v1/lots/:lotKey/certificate;
 * practice.md §3.3), laid out to print on A4 from the browser (File › Print › Save as PDF). It is the record a
 * certificate is issued from, with its SHA-256 record digest; it becomes a certificate only when the
 * authorized signatory signs it, so the signature block is left for the pen.
 */

type Obj = Record<string, unknown>;
interface Stats { meanC: number; minC: number; maxC: number; coverage: number; readings: number }
interface Certificate {
  kind: 'batch' | 'lot';
  lot: { lotKey: string; specCode: string; heatNumber: string; date: string; definition: string };
  product: { code: string; name: string; material: string; description: string | null };
  specVersions: Array<{ version: number; status: string; approvedBy: string | null; approvedAt: string | null }>;
  heat: { heatNumber: string; material: string; grade: string | null; source: string; revision: number; revisedAt: string | null; revisedBy: string | null; chemistryCheck: Array<{ element: string; valueWtPct: number | null; minWtPct: number | null; maxWtPct: number | null; verdict: string }> };
  batches: Array<{
    id: string;
    code: string;
    lotKey: string;
    line: { code: string; name: string };
    equipment: { furnace: { code: string; name: string } | null; bath: { code: string; name: string } | null };
    specVersion: { version: number };
    partCount: number;
    weightKg: number;
    section: { shape: string; sizeMm: number };
    complete: boolean;
    process: {
      events: { chargedAt: string | null; outOfFurnaceAt: string | null; intoBathAt: string | null; outOfBathAt: string | null };
      austenitize: { soakMin: number | null; tempC: Stats | null; inFurnaceMin: number | null };
      transfer: { seconds: number | null; maxS: number | null; withinLimit: boolean | null };
      bath: { holdMin: number | null; tempC: Stats | null; window: { minTempC: number; maxTempC: number; minHoldMin: number; maxHoldMin: number } | null };
    } | null;
    prediction: { modelVersion: string; overall: string | null; bands: Record<string, { p05: number | null; p50: number | null; p95: number | null } | null>; verdicts: Array<{ criterion: string; verdict: string; message: string }>; adiGrade: string | null } | null;
    labResults: Array<{ kind: string; externalRef: string; testStandard: string | null; scale: string | null; values: Obj; measuredAt: string | null; againstPrediction: Array<{ quantity: string; measured: number; verdict: string }> }>;
    acceptance: Array<{ criterion: string; requirement: string; measured: Obj; verdict: string }>;
    deviations: Array<{ rule: string; severity: string; status: string; message: string; openedAt: string; disposition: { disposition: string; reason: string | null; permit: string | null; signer: string | null; at: string | null } | null }>;
    release: { status: string; reasons: string[]; concessions: string[] };
  }>;
  summary: { batches: number; partCount: number; weightKg: number; release: string; concessions: string[]; hardness: { scale: string; readings: number; min: number; max: number; mean: number } | null; deviations: number; modelVersions: string[] };
  recordDigest: string;
}

const RELEASE_WORD: Record<string, string> = {
  conforming: 'Conforming',
  'conforming-under-concession': 'Conforming under customer concession',
  'accepted-use-as-is': 'Accepted "use as is" (nonconformity dispositioned)',
  'pending-disposition': 'NOT RELEASABLE: deviations await disposition',
  'failed-acceptance': 'NOT RELEASABLE: acceptance test failed',
  retreat: 'NOT RELEASABLE: to be re-treated',
  scrap: 'SCRAP',
  'in-process': 'In process (not complete)',
};

/** 'at-risk' -> 'at risk': the verdict as the other screens say it. */
const verdictWord = (v: string): string => (VERDICT_TEXT as Record<string, string>)[v]?.toLowerCase() ?? v;

/** A standing reason with the deviation rule ids in it named as the deviation table names them. */
function inWords(reason: string, rules: string[]): string {
  return [...new Set(rules)].sort((a, b) => b.length - a.length).reduce((text, rule) => text.split(rule).join(fmtRule(rule)), reason)
    .replace(/\((MINOR|MAJOR|CRITICAL)\)/g, (_, s: string) => `(${s.toLowerCase()})`);
}

export const certificateView: ViewFactory = (ctx, route) => {
  const isLot = route.parts[0] === 'lots';
  // The hash keeps reserved characters percent-encoded (decodeURI leaves %3A alone): decode once here.
  const key = decodeURIComponent(route.parts[1]!);
  const zone = ctx.plantZone;
  const body = h('div', null, loading());
  const el = h('section', { class: 'certificate' }, body);

  async function load(): Promise<void> {
    try {
      const path = isLot ? `/v1/lots/${encodeURIComponent(key)}/certificate` : `/v1/batches/${key}/certificate`;
      const c = await ctx.api.get<Certificate>(path);
      render(c);
    } catch (error) {
      showError(body, error, 'Loading the certificate record');
    }
  }

  function render(c: Certificate): void {
    const t = (iso: string | null | undefined) => formatDateTime(iso ?? null, zone);
    const releasable = ['conforming', 'conforming-under-concession', 'accepted-use-as-is'].includes(c.summary.release);
    replace(
      body,
      h('div', { class: 'cert-actions no-print' },
        button('Print or save as PDF', () => window.print(), { kind: 'primary' }),
        c.kind === 'batch' ? link(`/lots/${encodeURIComponent(c.lot.lotKey)}/certificate`, `Whole lot ${c.lot.lotKey}`) : null,
        c.batches.length === 1 ? link(`/batches/${c.batches[0]!.id}`, `Load ${c.batches[0]!.code}`) : null),
      h('header', { class: 'cert-head' },
        h('h1', null, `Heat-treatment record — ${c.kind === 'lot' ? `lot ${c.lot.lotKey}` : `load ${c.batches[0]?.code ?? ''}`}`),
        h('p', null, 'Austempering. The record a certificate of conformance is issued from; it is a certificate only once signed below by the authorized signatory.'),
        h('p', { class: 'small' }, `Times in ${zone}. Record digest (SHA-256): `, h('code', null, c.recordDigest))),
      h('section', { class: 'cert-section' },
        h('h2', null, 'Product, heat and lot'),
        facts([
          ['Product', `${c.product.code} ${c.product.name} (${c.product.material === 'STEEL' ? 'steel' : 'ductile iron'})`],
          ['Spec version', c.specVersions.map((v) => `v${v.version} ${v.status.toLowerCase()}${v.approvedBy ? `, approved ${t(v.approvedAt)} by ${v.approvedBy}` : ''}`).join('; ')],
          ['Heat', `${c.heat.heatNumber}${c.heat.grade ? `, ${c.heat.grade}` : ''} (chemistry revision ${c.heat.revision}, ${c.heat.source}${c.heat.revisedBy ? `, recorded ${t(c.heat.revisedAt)} by ${c.heat.revisedBy}` : ''})`],
          ['Lot', `${c.lot.lotKey} — ${c.lot.definition}`],
          ['Quantity', `${c.summary.batches} load${c.summary.batches === 1 ? '' : 's'}, ${c.summary.partCount} parts, ${fmtKg(c.summary.weightKg)}`],
        ]),
        h('table', { class: 'cert-table' },
          h('caption', null, 'Chemistry (wt%) against the spec'),
          h('thead', null, h('tr', null, ...['Element', 'Heat', 'Limits', 'Check'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
          h('tbody', null, ...c.heat.chemistryCheck.map((e) => h('tr', null, h('td', null, e.element), h('td', { class: 'num' }, fmtNum(e.valueWtPct, 3)), h('td', null, fmtLimits(e.minWtPct, e.maxWtPct, 'wt%', 3)), h('td', null, e.verdict))))),
      ),
      ...c.batches.map((b) => {
        const p = b.process;
        const stats = (s: Stats | null | undefined) => (s ? `mean ${fmtC(s.meanC)}, ${fmtC(s.minC)}–${fmtC(s.maxC)} (${s.readings} readings, ${Math.round(s.coverage * 100)} % covered)` : 'no readings');
        return h('section', { class: 'cert-section cert-batch' },
          h('h2', null, `Load ${b.code}`),
          facts([
            ['Line / equipment', `${b.line.code}; furnace ${b.equipment.furnace?.code ?? '—'}, bath ${b.equipment.bath?.code ?? '—'}`],
            ['Load', `${b.partCount} parts, ${fmtKg(b.weightKg)}, ${fmtSection(b.section.shape, b.section.sizeMm)}`],
            ['Charged / out of furnace', `${t(p?.events.chargedAt)} / ${t(p?.events.outOfFurnaceAt)}`],
            ['Austenitize (as logged)', p ? `${stats(p.austenitize.tempC)}; soak ${fmtMin(p.austenitize.soakMin, 1)} of ${fmtMin(p.austenitize.inFurnaceMin, 1)} in the furnace` : '—'],
            ['Transfer', p?.transfer.seconds != null ? `${fmtS(p.transfer.seconds, 1)} (limit ${fmtS(p.transfer.maxS)}): ${p.transfer.withinLimit ? 'within limit' : 'OVER THE LIMIT'}` : '—'],
            ['Salt bath (as logged)', p ? `${stats(p.bath.tempC)}; hold ${fmtMin(p.bath.holdMin, 1)}${p.bath.window ? ` (spec ${p.bath.window.minTempC}–${p.bath.window.maxTempC} °C, ${p.bath.window.minHoldMin}–${p.bath.window.maxHoldMin} min)` : ''}` : '—'],
            ['Into / out of bath', `${t(p?.events.intoBathAt)} / ${t(p?.events.outOfBathAt)}`],
          ]),
          h('table', { class: 'cert-table' },
            h('caption', null, 'Acceptance tests against the spec'),
            h('thead', null, h('tr', null, ...['Criterion', 'Requirement', 'Measured', 'Result'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
            h('tbody', null, ...(b.acceptance.length === 0 ? [h('tr', null, h('td', { attrs: { colspan: 4 } }, 'The spec names no test a lab result can show.'))] : b.acceptance.map((a) =>
              h('tr', { class: a.verdict === 'fail' ? 'bad' : '', dataset: { criterion: a.criterion } }, h('td', null, fmtAcceptanceCriterion(a.criterion)), h('td', null, a.requirement), h('td', null, acceptanceMeasuredText(a.criterion, a.measured)), h('td', null, fmtAcceptanceVerdict(a.verdict))))))),
          b.labResults.length > 0
            ? h('table', { class: 'cert-table' },
                h('caption', null, 'Lab results'),
                h('thead', null, h('tr', null, ...['Test', 'Result', 'Standard', 'Ref', 'Measured at', 'Against prediction'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
                h('tbody', null, ...b.labResults.map((l) => h('tr', { dataset: { labRef: l.externalRef } }, h('td', null, fmtLabKind(l.kind, l.scale)), h('td', null, labResultText(l.kind, l.scale, l.values)), h('td', null, l.testStandard ?? ''), h('td', null, l.externalRef), h('td', null, l.measuredAt ? t(l.measuredAt) : 'not stated'),
                  h('td', null, l.againstPrediction.map((a) => fmtAgainstPrediction(a.quantity, a.verdict)).join('; ') || '—')))))
            : h('p', { class: 'muted' }, 'No lab results recorded.'),
          b.prediction
            ? h('div', null,
                h('p', null, `Prediction (model ${b.prediction.modelVersion}): overall ${b.prediction.overall ? verdictWord(b.prediction.overall) : '—'}. Predictions are estimates and are not test results.`),
                h('ul', { class: 'small' }, ...b.prediction.verdicts.map((v) => h('li', null, `${criterionName(v.criterion)}: ${verdictWord(v.verdict)}`))))
            : h('p', { class: 'muted' }, 'No prediction recorded.'),
          h('table', { class: 'cert-table' },
            h('caption', null, 'Deviations and dispositions'),
            h('thead', null, h('tr', null, ...['Deviation', 'Severity', 'Status', 'Disposition', 'Signed'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
            h('tbody', null, ...(b.deviations.length === 0 ? [h('tr', null, h('td', { attrs: { colspan: 5 } }, 'None.'))] : b.deviations.map((d) =>
              h('tr', null, h('td', null, h('strong', null, fmtRule(d.rule)), h('div', { class: 'small' }, d.message)), h('td', null, d.severity.toLowerCase()), h('td', null, d.status.toLowerCase()),
                h('td', null, d.disposition ? `${fmtDisposition(d.disposition.disposition)}${d.disposition.permit ? ` (permit ${d.disposition.permit})` : ''}: ${d.disposition.reason ?? ''}` : '—'),
                h('td', null, d.disposition ? `${d.disposition.signer ?? '—'}, ${t(d.disposition.at)}` : '—')))))),
          h('p', { class: `release ${['conforming', 'conforming-under-concession', 'accepted-use-as-is'].includes(b.release.status) ? 'ok' : 'bad'}` }, h('strong', null, `Standing: ${RELEASE_WORD[b.release.status] ?? b.release.status}`), b.release.reasons.length > 0 ? ` — ${b.release.reasons.map((r) => inWords(r, b.deviations.map((d) => d.rule))).join('; ')}` : ''),
        );
      }),
      h('section', { class: 'cert-section' },
        h('h2', null, 'Statement'),
        h('p', { class: `release ${releasable ? 'ok' : 'bad'}` }, h('strong', null, `Record standing: ${RELEASE_WORD[c.summary.release] ?? c.summary.release}.`),
          c.summary.concessions.length > 0 ? ` Shipped under customer concession ${c.summary.concessions.join(', ')}: label every container.` : ''),
        c.summary.hardness ? h('p', null, `Hardness: ${c.summary.hardness.readings} readings, ${fmtNum(c.summary.hardness.min, 0)}–${fmtNum(c.summary.hardness.max, 0)} ${c.summary.hardness.scale}, mean ${fmtNum(c.summary.hardness.mean, 1)} ${c.summary.hardness.scale}.`) : null,
        h('p', { class: 'small' }, 'The standing is read from the records; it does not authorise shipment. Nonconforming product goes out only with the disposition and, where required, the customer\u2019s written permission (IATF 16949 8.7.1.1).'),
        h('div', { class: 'signature' },
          h('div', null, h('span', null, 'Authorized signatory (name, role)'), h('span', { class: 'line' })),
          h('div', null, h('span', null, 'Date'), h('span', { class: 'line' })),
          h('div', null, h('span', null, 'Signature'), h('span', { class: 'line' }))),
      ),
    );
    document.body.dataset['certificateReady'] = 'true';
  }

  void load();
  return {
    el,
    title: 'Certificate record',
    dispose() {
      delete document.body.dataset['certificateReady'];
    },
  };
};
