import { describe, expect, it } from 'vitest';
import { parseAccuracyTestCsv, parseInstant, parseUniformitySurveyCsv, type CsvError } from './csv.js';
import { judgeUniformitySurvey } from './uniformity.js';
import { AMS2750G } from './reference/index.js';

const errorsOf = (r: { ok: boolean; errors?: readonly CsvError[] }) => {
  if (r.ok) throw new Error('expected errors');
  return r.errors!;
};

describe('parseAccuracyTestCsv', () => {
  const header = 'equipment_id,sensor_id,tested_at,setpoint_c,instrument_reading_c,test_sensor_id,test_reading_c,test_instrument_id,tip_distance_mm';

  it('reads rows into typed values, with comments, blank lines, CRLF and a BOM', () => {
    const text = `\uFEFF# SAT run 2025-03-04, technician AB\r\n${header}\r\nF-1,F1-TC-ctl,2025-03-04T08:15:00Z,870,871.2,T-17,868.9,FTI-1,25\r\n\r\nB-1,"B1-TC, control",2025-03-04T09:15:00+01:00,300,302.8,T-3,300.4,,\r\n`;
    const r = parseAccuracyTestCsv(text);
    if (!r.ok) throw new Error(JSON.stringify(r.errors));
    expect(r.value).toEqual([
      {
        row: 3,
        equipmentId: 'F-1',
        sensorId: 'F1-TC-ctl',
        testedAt: new Date('2025-03-04T08:15:00Z'),
        setpointC: 870,
        instrumentReadingC: 871.2,
        testSensorId: 'T-17',
        testSensorReadingC: 868.9,
        testInstrumentId: 'FTI-1',
        tipDistanceMm: 25,
      },
      {
        row: 5,
        equipmentId: 'B-1',
        sensorId: 'B1-TC, control',
        testedAt: new Date('2025-03-04T08:15:00Z'),
        setpointC: 300,
        instrumentReadingC: 302.8,
        testSensorId: 'T-3',
        testSensorReadingC: 300.4,
        testInstrumentId: null,
        tipDistanceMm: null,
      },
    ]);
  });

  it('accepts columns in any order, any case, and leaves optional columns out', () => {
    const r = parseAccuracyTestCsv('Test_Reading_C, SENSOR_ID,equipment_id,tested_at,setpoint_c,instrument_reading_c,test_sensor_id\n868.9,S,F-1,2025-03-04T08:15:00Z,870,871.2,T\n');
    expect(r.ok && r.value[0]).toMatchObject({ testSensorReadingC: 868.9, sensorId: 'S', tipDistanceMm: null });
  });

  it('names row and column for a bad number, a missing value and a local time without offset', () => {
    const text = [
      header,
      'F-1,S1,2025-03-04T08:15:00Z,870,"871,2",T-17,868.9,,', // decimal comma
      'F-1,S1,2025-03-04T08:15:00,870,871.2,T-17,,,', // no offset; empty required value
    ].join('\n');
    expect(errorsOf(parseAccuracyTestCsv(text))).toEqual([
      { row: 2, column: 'instrument_reading_c', columnIndex: 5, message: 'not a number: "871,2" (use a point as decimal separator)' },
      { row: 3, column: 'tested_at', columnIndex: 3, message: expect.stringMatching(/not an ISO 8601 instant with offset.*"2025-03-04T08:15:00"/) },
      { row: 3, column: 'test_reading_c', columnIndex: 7, message: 'required value is empty' },
    ]);
  });

  it('names the header problems: unknown, repeated and missing columns', () => {
    const errors = errorsOf(parseAccuracyTestCsv('equipment_id,sensor_id,sensor_id,tested_at,setpoint,instrument_reading_c,test_sensor_id,test_reading_c\n'));
    expect(errors).toEqual([
      { row: 1, column: 'sensor_id', columnIndex: 3, message: 'column sensor_id appears twice (first at position 2)' },
      { row: 1, column: 'setpoint', columnIndex: 5, message: expect.stringMatching(/unknown column "setpoint"; expected equipment_id, .*setpoint_c/) },
      { row: 1, column: 'setpoint_c', columnIndex: null, message: 'required column setpoint_c is missing' },
    ]);
  });

  it('names rows with the wrong number of fields or broken quotes, and counts comment lines in row numbers', () => {
    const text = [header, '# a note', 'F-1,S1,2025-03-04T08:15:00Z,870,871.2,T-17', 'F-1,"S1,2025-03-04T08:15:00Z,870,871.2,T-17,868.9,,'].join('\n');
    expect(errorsOf(parseAccuracyTestCsv(text))).toEqual([
      { row: 3, column: null, columnIndex: null, message: 'expected 9 fields as in the header (row 1), got 6' },
      { row: 4, column: null, columnIndex: null, message: 'a quoted field is not closed on this line' },
    ]);
  });

  it('refuses negative tip distances and empty files', () => {
    expect(errorsOf(parseAccuracyTestCsv(`${header}\nF-1,S1,2025-03-04T08:15:00Z,870,871.2,T-17,868.9,,-3`))).toEqual([
      { row: 2, column: 'tip_distance_mm', columnIndex: 9, message: 'must not be negative' },
    ]);
    expect(errorsOf(parseAccuracyTestCsv(''))[0].message).toBe('the file has no header line');
    expect(errorsOf(parseAccuracyTestCsv(`${header}\n`))[0]).toMatchObject({ row: 1, message: 'the file has a header but no data rows' });
  });
});

describe('parseInstant', () => {
  it('refuses dates Date would silently roll over', () => {
    expect(parseInstant('2025-02-29T08:00:00Z')).toBe('no such date 2025-02-29');
    expect(parseInstant('2024-02-29T08:00:00Z')).toEqual(new Date('2024-02-29T08:00:00Z'));
    expect(parseInstant('2025-03-04T24:00:00Z')).toBe('no such time 24:00:00');
    expect(parseInstant('2025-03-04T08:00Z')).toEqual(new Date('2025-03-04T08:00:00Z'));
  });
});

describe('parseUniformitySurveyCsv', () => {
  const text = [
    'location_id,test_sensor_id,at,reading_c',
    'L1,T-1,2025-03-04T08:00:00Z,868.0',
    'L2,T-2,2025-03-04T08:00:00Z,871.2',
    'L1,T-1,2025-03-04T08:02:00Z,869.5',
    'L2,T-2,2025-03-04T08:02:00Z,872.0',
  ].join('\n');

  it('reads locations (with their test sensor) and readings, ready to judge', () => {
    const r = parseUniformitySurveyCsv(text);
    if (!r.ok) throw new Error(JSON.stringify(r.errors));
    expect(r.value.locations).toEqual([
      { locationId: 'L1', testSensorId: 'T-1', firstRow: 2 },
      { locationId: 'L2', testSensorId: 'T-2', firstRow: 3 },
    ]);
    expect(r.value.readings).toHaveLength(4);
    // Calibrations come from the sensors' certificates on record, joined by test sensor id.
    const judged = judgeUniformitySurvey(
      {
        equipmentId: 'F-1',
        furnaceClass: 2,
        instrumentationType: 'B',
        setpointC: 870,
        locations: r.value.locations.map((l) => ({ ...l, calibration: [{ atC: 800, correctionC: 0 }, { atC: 900, correctionC: 0 }] })),
        readings: r.value.readings,
      },
      AMS2750G,
    );
    expect(judged.verdict).toBe('pass');
  });

  it('names the row and column of a location that changes sensor and of a repeated reading', () => {
    const bad = `${text}\nL1,T-9,2025-03-04T08:04:00Z,870.1\nL2,T-2,2025-03-04T08:02:00Z,872.1`;
    expect(errorsOf(parseUniformitySurveyCsv(bad))).toEqual([
      { row: 6, column: 'test_sensor_id', columnIndex: 2, message: 'location L1 used test sensor T-1 in row 2, here T-9' },
      { row: 7, column: 'at', columnIndex: 3, message: 'second reading for location L2 at 2025-03-04T08:02:00.000Z (first in row 5)' },
    ]);
  });

  it('names a bad reading value', () => {
    expect(errorsOf(parseUniformitySurveyCsv('location_id,test_sensor_id,at,reading_c\nL1,T-1,2025-03-04T08:00:00Z,NaN'))).toEqual([
      { row: 2, column: 'reading_c', columnIndex: 4, message: 'not a number: "NaN" (use a point as decimal separator)' },
    ]);
  });
});
