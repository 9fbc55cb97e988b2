/**
 * The pure parts of libs/db's pyrometry repository: channel corrections (certificate in force at each
 * reading, sensor and instrument in series, never extrapolated), plant-local day starts, and how
 * compliance findings become deviations. No database needed.
 *
 * Correction rule checked: linear interpolation between calibration points, or the nearest point, and no
 * extrapolation beyond them (practice.md §1.1 sensors [S15, S19]).
 */
import { describe, expect, it } from 'vitest';
import { localDateOf, type ComplianceResult } from '@ausline/compliance';
import { complianceFindings, correctChannels, resolveReference, startOfLocalDay, type Calibration, type Instrument, type RecomputeChannel, type Sensor } from '@ausline/db';

const t = (iso: string) => new Date(iso);
const ms = (iso: string) => Date.parse(iso);

function sensor(id: string, over: Partial<Sensor>, calibrations: Array<Partial<Calibration>>): Sensor & { calibrations: Calibration[] } {
  return {
    id,
    serial: id,
    equipmentId: 'e',
    channelId: 'c1',
    use: 'control',
    thermocoupleType: 'K',
    expendable: false,
    calibrationCertificateRef: null,
    calibrationPoints: [],
    calibratedAt: null,
    correctionMethod: 'linear',
    installedAt: t('2026-01-01T00:00:00Z'),
    retiredAt: null,
    priorUses: 0,
    priorMaxTempC: null,
    expiresOn: null,
    createdAt: t('2026-01-01T00:00:00Z'),
    updatedAt: t('2026-01-01T00:00:00Z'),
    ...over,
    calibrations: calibrations.map((c, i) => ({
      id: `${id}-cal${i}`,
      sensorId: id,
      instrumentId: null,
      certificateRef: `${id}/${i}`,
      calibratedAt: t('2026-01-01T00:00:00Z'),
      points: [],
      method: 'linear',
      result: {},
      passed: true,
      referenceId: 'AMS2750G',
      recordedBy: 'test',
      createdAt: t('2026-01-01T00:00:00Z'),
      ...c,
    })),
  };
}

function instrument(id: string, calibrations: Array<Partial<Calibration>>): Instrument & { calibrations: Calibration[] } {
  const s = sensor(id, {}, calibrations);
  return {
    id,
    serial: id,
    equipmentId: 'e',
    channelId: 'c1',
    use: 'recording',
    statedAccuracy: null,
    calibrationCertificateRef: null,
    calibrationPoints: [],
    calibratedAt: null,
    correctionMethod: 'linear',
    installedAt: s.installedAt,
    retiredAt: null,
    createdAt: s.createdAt,
    updatedAt: s.updatedAt,
    calibrations: s.calibrations.map((c) => ({ ...c, sensorId: null, instrumentId: id })),
  };
}

const channel = (samples: Array<[string, number]>): RecomputeChannel => ({
  channelId: 'c1',
  code: 'tc1',
  role: 'bath-tc',
  samples: samples.map(([iso, valueC]) => ({ tMs: ms(iso), valueC })),
});

describe('correctChannels', () => {
  it('interpolates between points, leaves values outside the calibrated range as read, and never touches another channel', () => {
    const s = sensor('s1', {}, [{ points: [{ atC: 300, correctionC: 1 }, { atC: 400, correctionC: 3 }] }]);
    const other: RecomputeChannel = { channelId: 'c2', code: 'tc2', role: 'bath-tc', samples: [{ tMs: ms('2026-02-01T00:00:00Z'), valueC: 350 }] };
    const out = correctChannels(
      [
        channel([
          ['2026-02-01T00:00:00Z', 350], // 1 + 0.5 × 2 = 2
          ['2026-02-01T00:00:10Z', 400], // on a point: 3
          ['2026-02-01T00:00:20Z', 420], // above the certificate: not extrapolated
          ['2026-02-01T00:00:30Z', 250], // below it: not extrapolated
        ]),
        other,
      ],
      [s],
      [],
    );
    expect(out.channels[0]!.samples.map((x) => x.valueC)).toEqual([352, 403, 420, 250]);
    expect(out.channels[1]).toBe(other);
    expect(out.corrections).toEqual([
      { channelId: 'c1', sensorIds: ['s1'], instrumentIds: [], samples: 4, corrected: 2, outsideCalibratedRange: 2, withoutCertificate: 0, maxAbsCorrectionC: 3 },
    ]);
  });

  it('uses the certificate in force at each reading and only while the sensor is installed', () => {
    const s = sensor('s1', { installedAt: t('2026-01-10T00:00:00Z'), retiredAt: t('2026-03-01T00:00:00Z') }, [
      { calibratedAt: t('2026-01-05T00:00:00Z'), points: [{ atC: 300, correctionC: 1 }, { atC: 400, correctionC: 1 }] },
      { calibratedAt: t('2026-02-01T00:00:00Z'), points: [{ atC: 300, correctionC: -2 }, { atC: 400, correctionC: -2 }], method: 'nearest' },
    ]);
    const out = correctChannels(
      [
        channel([
          ['2026-01-09T00:00:00Z', 370], // before install: no sensor serves the channel
          ['2026-01-20T00:00:00Z', 370], // first certificate
          ['2026-02-01T00:00:00Z', 370], // second certificate from its date
          ['2026-03-01T00:00:00Z', 370], // retired at this instant
        ]),
      ],
      [s],
      [],
    );
    expect(out.channels[0]!.samples.map((x) => x.valueC)).toEqual([370, 371, 368, 370]);
  });

  it('adds the instrument correction in series with the sensor correction', () => {
    const s = sensor('s1', {}, [{ points: [{ atC: 300, correctionC: 1 }, { atC: 400, correctionC: 1 }] }]);
    const i = instrument('i1', [{ points: [{ atC: 300, correctionC: -0.25 }, { atC: 400, correctionC: -0.25 }] }]);
    const out = correctChannels([channel([['2026-02-01T00:00:00Z', 370]])], [s], [i]);
    expect(out.channels[0]!.samples[0]!.valueC).toBe(370.75);
    expect(out.corrections[0]).toMatchObject({ sensorIds: ['s1'], instrumentIds: ['i1'], corrected: 1 });
  });
});

describe('startOfLocalDay', () => {
  it('is the first instant of the plant-local date, across daylight-saving changes', () => {
    // Europe/Berlin: CET (+01:00) in winter, CEST (+02:00) from 2026-03-29 (EU rule: last Sunday of March).
    expect(startOfLocalDay('2026-01-15', 'Europe/Berlin').toISOString()).toBe('2026-01-14T23:00:00.000Z');
    expect(startOfLocalDay('2026-03-30', 'Europe/Berlin').toISOString()).toBe('2026-03-29T22:00:00.000Z');
    expect(startOfLocalDay('2026-03-29', 'Europe/Berlin').toISOString()).toBe('2026-03-28T23:00:00.000Z');
    expect(startOfLocalDay('2026-07-01', 'UTC').toISOString()).toBe('2026-07-01T00:00:00.000Z');
    for (const [date, zone] of [['2026-10-25', 'Europe/Berlin'], ['2026-03-08', 'America/Chicago'], ['2026-11-01', 'America/Chicago']] as const) {
      const start = startOfLocalDay(date, zone);
      expect(localDateOf(start, zone)).toBe(date);
      expect(localDateOf(new Date(start.getTime() - 1), zone) < date).toBe(true);
    }
  });
});

describe('complianceFindings', () => {
  it('groups findings into one deviation per rule and equipment, MAJOR unless only rules or records are missing', () => {
    const rules = [{ key: 'k', value: 'v', confirmed: true, note: 'n' }];
    const result: ComplianceResult = {
      compliant: false,
      at: t('2026-02-01T00:00:00Z'),
      items: [],
      findings: [
        { kind: 'overdue', itemKind: 'tus', equipmentId: 'e', subjectId: 'e', reason: 'uniformity survey of e was due on 2026-01-20', rules },
        { kind: 'failed', itemKind: 'sat', equipmentId: 'e', subjectId: 's', reason: 'accuracy test of s failed', rules },
        { kind: 'sensor-use-limit', itemKind: 'sensor-replacement', equipmentId: 'e', subjectId: 's', reason: 'sensor s has 180 of 180 uses', rules },
        { kind: 'no-rule', itemKind: 'instrument-calibration', equipmentId: 'e', subjectId: 'i', reason: 'no interval', rules },
      ],
    };
    const out = complianceFindings('b1', { id: 'e', code: 'F1' }, t('2026-02-01T00:00:00Z'), result, 'AMS2750G');
    expect(out.map((f) => [f.rule, f.severity, f.dedupKey])).toEqual([
      ['equipment-overdue', 'MAJOR', 'b1:equipment-overdue:e'],
      ['sensor-use-limit', 'MAJOR', 'b1:sensor-use-limit:e'],
      ['equipment-record-incomplete', 'MINOR', 'b1:equipment-record-incomplete:e'],
    ]);
    expect(out[0]!.message).toBe('F1: pyrometry overdue or failed when the batch started at 2026-02-01T00:00:00.000Z: uniformity survey of e was due on 2026-01-20 (+1 more)');
    expect((out[0]!.details as { findings: unknown[] }).findings).toHaveLength(2);
  });
});

describe('resolveReference', () => {
  it('merges a stricter customer overlay and refuses a looser one with the entry path', () => {
    const stricter = resolveReference({
      standard: 'AMS2750',
      revision: 'G',
      customerOverlay: { source: 'Customer spec X (invented)', entries: [{ item: 'uniformityTolerance', furnaceClass: 2, value: { plusMinusC: 5 } }] },
    });
    expect(stricter.ok && stricter.reference.id).toBe('AMS2750G+overlay(Customer spec X (invented))');
    // practice.md §1.1 [S2, S70]: class 2 is ±6.0 °C; ±7.0 °C would loosen it.
    const looser = resolveReference({
      standard: 'AMS2750',
      revision: 'G',
      customerOverlay: { source: 'Customer spec Y (invented)', entries: [{ item: 'uniformityTolerance', furnaceClass: 2, value: { plusMinusC: 7 } }] },
    });
    expect(looser.ok).toBe(false);
    expect(!looser.ok && looser.errors[0]!.path).toBe('customerOverlay.entries.0.value');
    expect(resolveReference({ standard: 'AMS2750', revision: 'Z', customerOverlay: null })).toMatchObject({ ok: false, errors: [{ path: 'revision' }] });
  });
});
