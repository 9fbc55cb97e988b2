import type { LinePhysics } from './physics.js';
import { bathChannels, furnaceChannels, type ChannelDef, type LineDef } from './plant.js';
import { roundTo } from './rng.js';

/** One channel of one piece of equipment, as its controller logs it. */
export interface SimChannel {
  equipment: 'FURNACE' | 'BATH';
  equipmentCode: string;
  def: ChannelDef;
}

export function lineChannels(line: LineDef): SimChannel[] {
  return [
    ...furnaceChannels(line.furnace).map((def) => ({ equipment: 'FURNACE' as const, equipmentCode: line.furnace.code, def })),
    ...bathChannels(line.bath).map((def) => ({ equipment: 'BATH' as const, equipmentCode: line.bath.code, def })),
  ];
}

export interface GeneratedSample {
  /** ms from the scenario start. */
  tMs: number;
  value: number;
}

/**
 * The readings a channel logs in (fromMs, toMs]: one per interval on a grid aligned to the scenario start,
 * rounded to the recorder's resolution.
 */
export function channelSamples(physics: LinePhysics, channel: SimChannel, fromMs: number, toMs: number): GeneratedSample[] {
  const stepMs = channel.def.intervalS * 1000;
  const out: GeneratedSample[] = [];
  for (let t = (Math.floor(fromMs / stepMs) + 1) * stepMs; t <= toMs; t += stepMs) {
    out.push({ tMs: t, value: roundTo(physics.channelValue(channel.equipment, channel.def.code, t), channel.def.resolution) });
  }
  return out;
}
