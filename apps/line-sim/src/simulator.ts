import { Controller, type ControllerStats, type RequestRecord, type SampleRecord, type SimLogEvent } from './controller.js';
import type { HttpReply } from './http.js';
import { LinePhysics } from './physics.js';
import { productByCode, specInForce, type HeatDef } from './plant.js';
import { hashString, sequence } from './rng.js';
import type { Schedule, ScheduledLoad } from './schedule.js';
import { channelSamples, lineChannels, type SimChannel } from './signals.js';

/**
 * Runs the plant: a clock in plant time, the equipment physics, and one Controller per line (the line PLC
 * that runs furnace, transfer and bath, with a key scoped to both) plus one for the lab, each posting
 * through the public API with its own key.
 *
 * Plant time runs `speed` times faster than the wall clock but never ahead of it (the API refuses device
 * times in the future), so an accelerated run plays a stretch of the past and, once it has caught up,
 * goes on in real time. While it is catching up ("history": more than liveLagMs behind the wall clock)
 * the line controllers report each load's four events together, one after the other, once the load is out
 * of the salt: the service judges a load still in progress against its own clock, and a load that entered
 * the bath hours ago by that clock would look like a hold far too long and a silent recorder. In real time
 * every event is reported as it happens.
 */

export interface EquipmentHandle {
  code: string;
  id: string;
}

export interface LineHandles {
  code: string;
  id: string;
  furnace: EquipmentHandle;
  bath: EquipmentHandle;
  /** Key of the line controller, scoped to the furnace and the bath. */
  apiKey: string;
}

/** What setup created: ids and controller keys (see setup.ts). */
export interface PlantHandles {
  lines: LineHandles[];
  labKey: string;
}

export interface SimulatorOptions {
  apiUrl: string;
  plant: PlantHandles;
  schedule: Schedule;
  seed: number;
  /** Plant-time speed-up; Infinity = as fast as the API takes it. */
  speed: number;
  /** Stop generating at this plant time (epoch ms); null = until stop(). */
  stopAtMs: number | null;
  /** Heats the lab posts at the start (every heat the schedule may use). */
  heats: readonly HeatDef[];
  runId: string;
  log?: (event: SimLogEvent) => void;
  /** Wall-clock ms between clock ticks (default 200). */
  tickMs?: number;
  /** Largest plant-time step per tick (default 10 min): bounds the work and memory of one tick. */
  maxStepMs?: number;
  /** Closer to the wall clock than this counts as live (default 30 s). */
  liveLagMs?: number;
  /** Outbox size per controller and what to do when full (see Controller). */
  outboxCapacity?: number;
  overflow?: 'block' | 'drop-oldest';
  backoffBaseMs?: number;
  backoffCapMs?: number;
  /** Called once per tick with the plant time reached. */
  onTick?: (plantNowMs: number, live: boolean) => void;
  /** Test hook: wall clock. */
  now?: () => number;
}

export interface ChannelTally {
  equipment: string;
  channel: string;
  generated: number;
  /** Sum of the generated values (checks that what is stored is what was sent). */
  sum: number;
}

export interface SimReport {
  plantStartMs: number;
  plantReachedMs: number;
  batchesCreated: string[];
  eventsAcked: number;
  labResultsAcked: number;
  heatsAcked: number;
  controllers: ControllerStats[];
  channels: ChannelTally[];
  /** Loads whose events were held while catching up and released together. */
  loadsReleasedTogether: number;
}

type LoadStep = 'create' | 'CHARGED' | 'OUT_OF_FURNACE' | 'INTO_BATH' | 'OUT_OF_BATH' | 'lab';

interface LoadState {
  load: ScheduledLoad;
  line: LineRuntime;
  /** Steps already handed to a controller. */
  done: Set<LoadStep>;
}

interface LineRuntime {
  handles: LineHandles;
  physics: LinePhysics;
  schedule: Schedule['lines'][number];
  channels: SimChannel[];
  controller: Controller;
  /** Index of the first load not yet completely handed over. */
  firstOpen: number;
}

const sleep = (ms: number) => new Promise<void>((resolve) => setTimeout(resolve, ms));

const EVENT_STEPS: ReadonlyArray<{ step: Exclude<LoadStep, 'create' | 'lab'>; at: keyof ScheduledLoad; equipment: 'furnace' | 'bath' }> = [
  { step: 'CHARGED', at: 'chargedMs', equipment: 'furnace' },
  { step: 'OUT_OF_FURNACE', at: 'outOfFurnaceMs', equipment: 'furnace' },
  { step: 'INTO_BATH', at: 'intoBathMs', equipment: 'bath' },
  { step: 'OUT_OF_BATH', at: 'outOfBathMs', equipment: 'bath' },
];

/** Lookahead of the routine schedule: the physics must know loads before they happen. */
const SCHEDULE_LOOKAHEAD_MS = 6 * 3_600_000;

export class Simulator {
  private readonly lines: LineRuntime[];
  private readonly lab: Controller;
  private readonly states = new Map<string, LoadState>();
  private readonly batchIds = new Map<string, string>();
  private readonly refusedBatches = new Set<string>();
  private readonly heatsAcked = new Set<string>();
  private readonly refusedHeats = new Set<string>();
  private readonly tallies = new Map<string, ChannelTally>();
  private readonly now: () => number;
  private plantNowMs: number;
  private stopRequested = false;
  private eventsAcked = 0;
  private labResultsAcked = 0;
  private releasedTogether = 0;
  private live = false;

  constructor(private readonly options: SimulatorOptions) {
    this.now = options.now ?? Date.now;
    this.plantNowMs = options.schedule.startMs;
    const controller = (name: string, apiKey: string) =>
      new Controller({
        name,
        baseUrl: options.apiUrl,
        apiKey,
        runId: options.runId,
        capacity: options.outboxCapacity,
        overflow: options.overflow ?? 'block',
        backoffBaseMs: options.backoffBaseMs,
        backoffCapMs: options.backoffCapMs,
        log: options.log,
      });
    this.lines = options.schedule.lines.map((lineSchedule) => {
      const handles = options.plant.lines.find((l) => l.code === lineSchedule.line.code);
      if (!handles) throw new Error(`no handles (ids, keys) for line ${lineSchedule.line.code}`);
      return {
        handles,
        physics: new LinePhysics(lineSchedule.line, lineSchedule.loads, options.schedule.faults, options.seed),
        schedule: lineSchedule,
        channels: lineChannels(lineSchedule.line),
        controller: controller(handles.code, handles.apiKey),
        firstOpen: 0,
      };
    });
    this.lab = controller('lab', options.plant.labKey);
  }

  private get controllers(): Controller[] {
    return [...this.lines.map((l) => l.controller), this.lab];
  }

  /** Plant time reached so far (epoch ms). */
  get plantNow(): number {
    return this.plantNowMs;
  }

  /** Stop generating; run() then drains the outboxes and resolves. */
  stop(): void {
    this.stopRequested = true;
  }

  /**
   * Runs until stopAtMs (or stop()), then waits for every outbox to empty, at most drainTimeoutMs (the rest
   * is reported as pending).
   */
  async run(drainTimeoutMs = 120_000): Promise<SimReport> {
    for (const c of this.controllers) c.start();
    for (const heat of this.options.heats) this.lab.pushRequest(this.heatRequest(heat));

    const tickMs = this.options.tickMs ?? 200;
    const maxStepMs = this.options.maxStepMs ?? 10 * 60_000;
    const speed = this.options.speed;
    const wallStart = this.now();
    const plantStart = this.options.schedule.startMs;
    const stopAt = this.options.stopAtMs ?? Number.POSITIVE_INFINITY;

    while (!this.stopRequested && this.plantNowMs < stopAt) {
      const wallNow = this.now();
      const blocked = this.controllers.some((c) => !c.hasRoom());
      let target = Number.isFinite(speed) ? plantStart + (wallNow - wallStart) * speed : this.plantNowMs + maxStepMs;
      target = Math.min(target, this.plantNowMs + maxStepMs, wallNow, stopAt);
      if (!blocked && target > this.plantNowMs) {
        this.live = wallNow - target <= (this.options.liveLagMs ?? 30_000);
        this.advance(this.plantNowMs, target);
        this.plantNowMs = target;
        this.options.onTick?.(this.plantNowMs, this.live);
      }
      const caughtUp = this.plantNowMs >= wallNow - 1;
      await sleep(blocked || caughtUp || Number.isFinite(speed) ? tickMs : 0);
    }

    const deadlineMs = this.now() + drainTimeoutMs;
    await Promise.all(this.controllers.map((c) => c.stop({ deadlineMs })));
    return this.report();
  }

  report(): SimReport {
    return {
      plantStartMs: this.options.schedule.startMs,
      plantReachedMs: this.plantNowMs,
      batchesCreated: [...this.batchIds.keys()],
      eventsAcked: this.eventsAcked,
      labResultsAcked: this.labResultsAcked,
      heatsAcked: this.heatsAcked.size,
      controllers: this.controllers.map((c) => c.report()),
      channels: [...this.tallies.values()],
      loadsReleasedTogether: this.releasedTogether,
    };
  }

  // ------------------------------------------------------------------------------------------
  // One clock step
  // ------------------------------------------------------------------------------------------

  private advance(fromMs: number, toMs: number): void {
    const start = this.options.schedule.startMs;
    const fromOff = fromMs - start;
    const toOff = toMs - start;
    for (const line of this.lines) {
      line.schedule.extendUntil(toOff + SCHEDULE_LOOKAHEAD_MS);
      // Readings first: in the outbox they then precede the events of the same moment.
      const furnaceSamples: SampleRecord[] = [];
      const bathSamples: SampleRecord[] = [];
      const equipmentId = { FURNACE: line.handles.furnace.id, BATH: line.handles.bath.id };
      for (const channel of line.channels) {
        const samples = channelSamples(line.physics, channel, fromOff, toOff);
        if (samples.length === 0) continue;
        const tally = this.tally(channel);
        for (const s of samples) {
          tally.generated += 1;
          tally.sum += s.value;
          (channel.equipment === 'FURNACE' ? furnaceSamples : bathSamples).push({
            equipmentId: equipmentId[channel.equipment],
            channel: channel.def.code,
            tMs: start + s.tMs,
            value: s.value,
          });
        }
      }
      // Time order across the channels of each piece of equipment.
      furnaceSamples.sort((a, b) => a.tMs - b.tMs);
      bathSamples.sort((a, b) => a.tMs - b.tMs);
      line.controller.pushSamples(furnaceSamples);
      line.controller.pushSamples(bathSamples);
      this.handleLoads(line, toOff);
    }
  }

  private tally(channel: SimChannel): ChannelTally {
    const key = `${channel.equipmentCode}/${channel.def.code}`;
    let t = this.tallies.get(key);
    if (!t) {
      t = { equipment: channel.equipmentCode, channel: channel.def.code, generated: 0, sum: 0 };
      this.tallies.set(key, t);
    }
    return t;
  }

  private handleLoads(line: LineRuntime, toOff: number): void {
    const loads = line.schedule.loads;
    for (let i = line.firstOpen; i < loads.length; i++) {
      const load = loads[i]!;
      if (load.createdMs > toOff) break;
      let state = this.states.get(load.code);
      if (!state) {
        state = { load, line, done: new Set() };
        this.states.set(load.code, state);
      }
      this.handleLoad(state, toOff);
      const finished = state.done.has('lab') || (this.options.stopAtMs !== null && state.done.has('OUT_OF_BATH') && load.labMs > this.options.stopAtMs - this.options.schedule.startMs);
      if (finished && i === line.firstOpen) {
        line.firstOpen += 1;
        this.states.delete(load.code);
      }
    }
  }

  private handleLoad(state: LoadState, toOff: number): void {
    const { load, line, done } = state;
    if (!done.has('create')) {
      line.controller.pushRequest(this.createBatchRequest(load));
      done.add('create');
    }
    const lastDue = toOff >= load.outOfBathMs;
    const holdBack = !this.live && !lastDue;
    const due = EVENT_STEPS.filter((e) => !done.has(e.step) && (load[e.at] as number) <= toOff);
    if (due.length > 0 && !holdBack) {
      const requests = due.map((e) => {
        const equipmentId = e.equipment === 'furnace' ? line.handles.furnace.id : line.handles.bath.id;
        done.add(e.step);
        return this.eventRequest(load, e.step, this.options.schedule.startMs + (load[e.at] as number), equipmentId);
      });
      if (requests.length === 1) {
        line.controller.pushRequest(requests[0]!);
      } else {
        // Several steps at once (catching up): sent concurrently, so the server's coalesced recompute (at
        // most one job running and one waiting per batch) ends on the load whole, not half recorded.
        if (due.length === EVENT_STEPS.length) this.releasedTogether += 1;
        line.controller.pushGroup({ describe: `events of ${load.code}`, requests });
      }
    }
    if (!done.has('lab') && done.has('OUT_OF_BATH') && load.labMs <= toOff) {
      for (const request of this.labRequests(load)) this.lab.pushRequest(request);
      done.add('lab');
    }
  }

  // ------------------------------------------------------------------------------------------
  // Requests
  // ------------------------------------------------------------------------------------------

  private heatRequest(heat: HeatDef): RequestRecord {
    return {
      describe: `heat ${heat.heatNumber}`,
      prepare: () => ({
        method: 'POST',
        path: '/v1/heats',
        body: { heatNumber: heat.heatNumber, material: heat.material, grade: heat.grade, chemistryWtPct: heat.chemistryWtPct, source: heat.source },
      }),
      onAck: () => {
        this.heatsAcked.add(heat.heatNumber);
      },
      onReject: () => {
        this.refusedHeats.add(heat.heatNumber);
      },
    };
  }

  private createBatchRequest(load: ScheduledLoad): RequestRecord {
    const product = productByCode(load.plan.product);
    return {
      describe: `batch ${load.code}`,
      prepare: () => {
        if (this.refusedHeats.has(load.plan.heat)) return 'skip';
        if (!this.heatsAcked.has(load.plan.heat)) return null;
        return {
          method: 'POST',
          path: '/v1/batches',
          body: {
            code: load.code,
            lineCode: load.line,
            heatNumber: load.plan.heat,
            productSpecCode: product.code,
            partCount: load.plan.partCount,
            weightKg: load.plan.weightKg,
            sectionShape: load.sectionShape,
            sectionSizeMm: load.sectionSizeMm,
            scheduledHoldMin: load.scheduledHoldMin,
          },
        };
      },
      onAck: (reply: HttpReply) => {
        const id = (reply.body as { batch?: { id?: string } })?.batch?.id;
        if (id) this.batchIds.set(load.code, id);
        this.options.log?.({ level: 'info', msg: 'batch recorded', batch: load.code, product: product.code, heat: load.plan.heat, planted: load.plan.planted ?? null });
      },
      onReject: () => {
        this.refusedBatches.add(load.code);
      },
    };
  }

  private batchPath(load: ScheduledLoad, suffix: string): { method: 'POST'; path: string } | null | 'skip' {
    if (this.refusedBatches.has(load.code)) return 'skip';
    const id = this.batchIds.get(load.code);
    return id ? { method: 'POST', path: `/v1/batches/${id}/${suffix}` } : null;
  }

  private eventRequest(load: ScheduledLoad, kind: string, atMs: number, equipmentId: string): RequestRecord {
    return {
      describe: `${kind} ${load.code}`,
      prepare: () => {
        const target = this.batchPath(load, 'events');
        if (target === null || target === 'skip') return target;
        return { ...target, body: { kind, at: new Date(atMs).toISOString(), equipmentId } };
      },
      onAck: () => {
        this.eventsAcked += 1;
        if (kind === 'OUT_OF_BATH') this.options.log?.({ level: 'info', msg: 'load out of the salt', batch: load.code, holdMin: load.plan.holdMin });
      },
    };
  }

  private labRequests(load: ScheduledLoad): RequestRecord[] {
    const product = productByCode(load.plan.product);
    const criteria = specInForce(product).acceptanceCriteria;
    const scale = criteria.hardness?.scale ?? (product.material === 'DUCTILE_IRON' ? 'HBW' : 'HRC');
    const standard = scale === 'HBW' ? 'ISO 6506-1' : scale === 'HV' ? 'ISO 6507-1' : 'ISO 6508-1';
    const random = sequence(hashString(load.code) ^ this.options.seed);
    const readings = (mean: number, n: number) => {
      // Scatter of a hardness test: about ±0.6 HRC or ±6 HBW between indentations [M].
      const spread = scale === 'HRC' ? 0.6 : 6;
      const step = scale === 'HRC' ? 0.5 : 1;
      return Array.from({ length: n }, () => Math.round((mean + (random() * 2 - 1) * spread) / step) * step);
    };
    const measuredAt = new Date(this.options.schedule.startMs + load.labMs).toISOString();
    const results: Array<{ describe: string; body: Record<string, unknown> }> = [
      {
        describe: `hardness ${load.code}`,
        body: { kind: 'HARDNESS', scale, testStandard: standard, readings: readings(load.plan.lab.hardness, scale === 'HBW' ? 3 : 5), externalRef: `${load.code}-H`, measuredAt, location: 'surface' },
      },
    ];
    if (load.plan.lab.coreHardness !== undefined) {
      results.push({
        describe: `core hardness ${load.code}`,
        body: { kind: 'HARDNESS', scale, testStandard: standard, readings: readings(load.plan.lab.coreHardness, 3), externalRef: `${load.code}-HC`, measuredAt, location: 'core, mid-length section' },
      });
    }
    if (load.plan.lab.retainedAusteniteVolPct !== undefined) {
      results.push({
        describe: `retained austenite ${load.code}`,
        body: { kind: 'RETAINED_AUSTENITE', method: 'XRD', testStandard: 'ASTM E975', volumePct: load.plan.lab.retainedAusteniteVolPct, externalRef: `${load.code}-RA`, measuredAt },
      });
    }
    return results.map(({ describe, body }) => ({
      describe,
      prepare: () => {
        const target = this.batchPath(load, 'lab-results');
        if (target === null || target === 'skip') return target;
        return { ...target, body };
      },
      onAck: () => {
        this.labResultsAcked += 1;
      },
    }));
  }
}
