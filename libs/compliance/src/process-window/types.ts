import type { ProcessWindow } from '@ausline/contracts';
import type { DeviationSeverity } from '../deviations/deviation-state.js';

/** Stable rule ids: they are stored on deviations, filtered on in the API and shown on screens. */
export const PROCESS_WINDOW_RULES = [
  'austenitize-temp',
  'austenitize-time',
  'transfer-time',
  'bath-band-excursion',
  'hold-min',
  'hold-max',
  'channel-gap',
  'signal-flatline',
  'signal-implausible',
  'thermocouple-disagreement',
  'load-event-order',
] as const;
export type ProcessWindowRule = (typeof PROCESS_WINDOW_RULES)[number];

/** Where a temperature channel sits. Furnace zones prove the austenitize; bath thermocouples the hold. */
export type TemperatureChannelRole = 'furnace-zone' | 'bath-tc';

export interface TemperatureSample {
  /** Device time, epoch milliseconds. */
  tMs: number;
  valueC: number;
}

export interface TemperatureChannelSeries {
  channelId: string;
  /** The code the controller posts under ('zone1', 'tc2'); used in messages. */
  code: string;
  role: TemperatureChannelRole;
  /** Any order; duplicates by time keep the last given. */
  samples: readonly TemperatureSample[];
}

/** Load events of one batch, epoch milliseconds (device time of the line's controllers). */
export interface LoadEventTimes {
  chargedMs?: number;
  outOfFurnaceMs?: number;
  intoBathMs?: number;
  outOfBathMs?: number;
}

export interface ProcessWindowInput {
  batchId: string;
  window: ProcessWindow;
  events: LoadEventTimes;
  channels: readonly TemperatureChannelSeries[];
  /** Evaluation time, epoch ms. Ends the open phase of a batch still in progress. */
  nowMs: number;
  /**
   * Controllers send in batches (store-and-forward, practice.md §5.3); the newest samples of a batch
   * still in progress may simply not have arrived yet. The trailing gap of an open phase counts only up
   * to now minus this allowance. Default 60 s (common practice: a poll/post cycle of tens of seconds).
   */
  ingestLatencyAllowanceS?: number;
  /** IANA zone of the line: times in messages are written on its clock; details stay ISO UTC. */
  timeZone?: string;
}

export type FindingDetails = Record<string, number | string | boolean | null | readonly unknown[]>;

export interface ProcessWindowFinding {
  rule: ProcessWindowRule;
  severity: DeviationSeverity;
  /** Stable per batch + rule + channel (or channel pair): a recompute refreshes, never duplicates. */
  dedupKey: string;
  /** The channel whose signal broke the rule; null for batch-level rules and channel pairs. */
  channelId: string | null;
  /** One line a metallurgist understands, with numbers and units. */
  message: string;
  details: FindingDetails;
}

/** Figures measured on the way, for summaries and SPC features (practice.md §0 item 5); null = unknown yet. */
export interface ProcessWindowMeasures {
  phase: 'NOT_STARTED' | 'IN_FURNACE' | 'IN_TRANSFER' | 'IN_BATH' | 'DONE';
  /** Longest continuous time with every furnace zone at or above the austenitize minimum. */
  soakMin: number | null;
  transferS: number | null;
  /** Time in the bath so far (open) or in total (closed). */
  holdMin: number | null;
}

export interface ProcessWindowEvaluation {
  findings: ProcessWindowFinding[];
  measures: ProcessWindowMeasures;
}

export function dedupKeyFor(batchId: string, rule: ProcessWindowRule, channelKey?: string): string {
  return channelKey ? `${batchId}:${rule}:${channelKey}` : `${batchId}:${rule}`;
}
