import type { SectionShape } from '@ausline/contracts';
import { MAX_LOAD_SPAN_MS, furnaceReachMin, type EquipmentFault, type LoadPhysics } from './physics.js';
import { lineByCode, productByCode, specInForce, type LineDef } from './plant.js';
import type { FaultTime, LoadPlan, ScenarioDef } from './scenario.js';

/**
 * Turns load plans into times on each line. A line has one furnace and one bath, each holding one load:
 * the next load is charged once the furnace has been unloaded and reloaded (LOADING_MIN), and later if
 * it would otherwise reach the salt before the previous basket is out (BATH_CLEAR_MIN).
 *
 * Times are milliseconds from the scenario start (physics and the simulator work in offsets); batch codes
 * use the plant's wall clock, so the schedule needs the absolute start.
 */

export const FIRST_CHARGE_MIN = 15;
/** Unload, swap baskets, reload. */
export const LOADING_MIN = 12;
/** Basket out, the next one in: the salt gets a few minutes between loads. */
export const BATH_CLEAR_MIN = 3;
/** The load is built and its batch recorded this long before it is charged. */
export const PLAN_AHEAD_MIN = 15;
/** Cool, wash, cut and test: the lab posts its results this long after the load leaves the salt. */
export const LAB_DELAY_MIN = 90;
/** The operator starts the soak clock once every zone is this far inside the band. */
export const REACH_MARGIN_C = 3;

const MIN = 60_000;

export interface ScheduledLoad extends LoadPhysics {
  line: string;
  /** Position on its line, from 1. */
  seq: number;
  code: string;
  plan: LoadPlan;
  sectionShape: SectionShape;
  sectionSizeMm: number;
  scheduledHoldMin: number;
  /** The batch is created (POST /v1/batches) at this offset. */
  createdMs: number;
  /** The lab posts its results at this offset. */
  labMs: number;
  /** From the routine generator after the scripted day. */
  routine: boolean;
}

export class LineSchedule {
  /** Sorted by chargedMs; physics reads this array, so it is only ever appended to. */
  readonly loads: ScheduledLoad[] = [];
  private furnaceFreeMs: number;
  private bathFreeMs = 0;
  private routineTurn = 0;

  constructor(
    readonly line: LineDef,
    private readonly startMs: number,
    private readonly routine: readonly LoadPlan[],
    firstChargeMin = FIRST_CHARGE_MIN,
  ) {
    this.furnaceFreeMs = (firstChargeMin - LOADING_MIN) * MIN;
  }

  add(plan: LoadPlan, routine = false): ScheduledLoad {
    const product = productByCode(plan.product);
    if (product.line !== this.line.code) throw new Error(`${plan.product} is made on ${product.line}, not ${this.line.code}`);
    const window = specInForce(product).processWindow;
    const furnaceMs = Math.round((furnaceReachMin(this.line.furnace, plan.weightKg, window.austenitize.minTempC, REACH_MARGIN_C) + plan.soakMin) * MIN / 1000) * 1000;
    const transferMs = Math.round(plan.transferS * 1000);
    let chargedMs = this.furnaceFreeMs + (LOADING_MIN + (plan.idleBeforeMin ?? 0)) * MIN;
    chargedMs = Math.max(chargedMs, this.bathFreeMs + BATH_CLEAR_MIN * MIN - furnaceMs - transferMs);
    chargedMs = Math.ceil(chargedMs / MIN) * MIN; // loads are charged on the minute
    const outOfFurnaceMs = chargedMs + furnaceMs;
    const intoBathMs = outOfFurnaceMs + transferMs;
    const outOfBathMs = intoBathMs + Math.round(plan.holdMin * MIN);
    if (outOfBathMs - chargedMs > MAX_LOAD_SPAN_MS) throw new Error(`load ${plan.product} takes longer than the physics looks back`);
    this.furnaceFreeMs = outOfFurnaceMs;
    this.bathFreeMs = outOfBathMs;
    const load: ScheduledLoad = {
      line: this.line.code,
      seq: this.loads.length + 1,
      code: batchCode(this.line, this.startMs + chargedMs),
      plan,
      weightKg: plan.weightKg,
      sectionShape: product.part.sectionShape,
      sectionSizeMm: product.part.sectionSizeMm,
      scheduledHoldMin: plan.scheduledHoldMin ?? plan.holdMin,
      createdMs: chargedMs - PLAN_AHEAD_MIN * MIN,
      chargedMs,
      outOfFurnaceMs,
      intoBathMs,
      outOfBathMs,
      labMs: outOfBathMs + LAB_DELAY_MIN * MIN,
      routine,
    };
    this.loads.push(load);
    return load;
  }

  /** Appends routine loads until one is charged after `offsetMs` (no-op without a routine). */
  extendUntil(offsetMs: number): void {
    if (this.routine.length === 0) return;
    while (this.loads.length === 0 || this.loads[this.loads.length - 1]!.chargedMs <= offsetMs) {
      this.add(this.routine[this.routineTurn % this.routine.length]!, true);
      this.routineTurn += 1;
    }
  }
}

export interface Schedule {
  startMs: number;
  scenario: ScenarioDef | null;
  lines: LineSchedule[];
  faults: EquipmentFault[];
  /** End of the scripted day (offset); 0 without a scenario. */
  scriptedEndMs: number;
}

export interface ScheduleOptions {
  /** Absolute time of the scenario start (epoch ms). */
  startMs: number;
  /** Keep producing routine loads after the scripted ones. */
  routine: boolean;
  /** First charge on each line, minutes after the start. */
  firstChargeMin?: number;
}

/** The schedule of a scenario (or, with scenario null, of routine production only). */
export function buildSchedule(scenario: ScenarioDef | null, routinePlans: Record<string, LoadPlan[]>, options: ScheduleOptions): Schedule {
  const lineCodes = scenario ? Object.keys(scenario.lines) : Object.keys(routinePlans);
  const lines = lineCodes.map((code) => {
    const schedule = new LineSchedule(lineByCode(code), options.startMs, options.routine ? (routinePlans[code] ?? []) : [], options.firstChargeMin);
    for (const plan of scenario?.lines[code] ?? []) schedule.add(plan);
    return schedule;
  });
  const at = (line: string, time: FaultTime): number => {
    if (typeof time === 'number') return time * MIN;
    const load = lines.find((l) => l.line.code === line)?.loads[time.afterLoad - 1];
    if (!load) throw new Error(`fault on ${line} refers to load ${time.afterLoad}, which is not planned`);
    return load[`${time.event}Ms`] + time.plusMin * MIN;
  };
  const faults: EquipmentFault[] = (scenario?.faults ?? []).map((f) =>
    f.kind === 'bath-creep'
      ? { kind: 'bath-creep', line: f.line, startMs: at(f.line, f.start), endMs: at(f.line, f.end), rateCPerH: f.rateCPerH, fixTauS: f.fixTauMin * 60 }
      : { kind: 'thermocouple-drift', line: f.line, tc: f.tc, startMs: at(f.line, f.start), endMs: at(f.line, f.end), finalOffsetC: f.finalOffsetC, tauS: f.tauMin * 60 },
  );
  return { startMs: options.startMs, scenario, lines, faults, scriptedEndMs: scenario ? scenario.durationMin * MIN : 0 };
}

/** Batch code from the line and the plant wall-clock time of charging: 'L1-250304-0712'. */
export function batchCode(line: LineDef, chargedAtMs: number): string {
  const parts = new Intl.DateTimeFormat('en-GB', {
    timeZone: line.timeZone,
    year: '2-digit',
    month: '2-digit',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
    hourCycle: 'h23',
  }).formatToParts(new Date(chargedAtMs));
  const get = (type: string) => parts.find((p) => p.type === type)?.value ?? '00';
  return `${line.shortCode}-${get('year')}${get('month')}${get('day')}-${get('hour')}${get('minute')}`;
}
