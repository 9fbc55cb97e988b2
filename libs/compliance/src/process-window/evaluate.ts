import { prepareContext } from './context.js';
import { evaluateAustenitize } from './rules/austenitize.js';
import { evaluateBathBand, evaluateTwinDisagreement } from './rules/bath.js';
import { evaluateChannelGaps, evaluateFlatline, evaluateImplausible } from './rules/signal.js';
import { evaluateEventOrder, evaluateHold, evaluateTransfer } from './rules/timing.js';
import {
  PROCESS_WINDOW_RULES,
  type ProcessWindowEvaluation,
  type ProcessWindowFinding,
  type ProcessWindowInput,
  type ProcessWindowMeasures,
} from './types.js';

/**
 * Evaluates a batch's process window over its whole raw history: load events plus every furnace-zone and
 * bath-thermocouple reading. Pure and deterministic: the same input gives the same findings, in the same
 * order, with the same text, so a recompute refreshes stored deviations instead of churning them.
 *
 * Readings are taken as sample-and-hold (no interpolation) up to the allowed channel gap; samples may
 * come in any order and at any rate. A batch still in progress is judged only on what is already certain
 * (a running hold is never 'hold-min'; a running soak is never 'too short').
 */
export function evaluateProcessWindow(input: ProcessWindowInput): ProcessWindowEvaluation {
  const ctx = prepareContext(input);
  const austenitize = evaluateAustenitize(ctx);
  const transfer = evaluateTransfer(ctx);
  const hold = evaluateHold(ctx);
  const findings: ProcessWindowFinding[] = [
    ...evaluateEventOrder(ctx),
    ...austenitize.findings,
    ...transfer.findings,
    ...evaluateBathBand(ctx),
    ...hold.findings,
    ...evaluateChannelGaps(ctx),
    ...evaluateFlatline(ctx),
    ...evaluateImplausible(ctx),
    ...evaluateTwinDisagreement(ctx),
  ];
  const ruleOrder = (f: ProcessWindowFinding) => PROCESS_WINDOW_RULES.indexOf(f.rule);
  findings.sort((a, b) => ruleOrder(a) - ruleOrder(b) || (a.dedupKey < b.dedupKey ? -1 : a.dedupKey > b.dedupKey ? 1 : 0));

  const e = input.events;
  const measures: ProcessWindowMeasures = {
    phase:
      e.outOfBathMs !== undefined
        ? 'DONE'
        : e.intoBathMs !== undefined
          ? 'IN_BATH'
          : e.outOfFurnaceMs !== undefined
            ? 'IN_TRANSFER'
            : e.chargedMs !== undefined
              ? 'IN_FURNACE'
              : 'NOT_STARTED',
    soakMin: austenitize.longestSoakMs === null ? null : austenitize.longestSoakMs / 60_000,
    transferS: transfer.transferMs === null ? null : transfer.transferMs / 1000,
    holdMin: hold.holdMs === null ? null : hold.holdMs / 60_000,
  };
  return { findings, measures };
}
