import { describe, expect, it } from 'vitest';
import {
  A897_GRADES,
  a897GradeForTensile,
  adiTensileFromHbw,
  hbwFromHv,
  hrcFromHv,
  hvFromHbw,
  hvFromHrc,
  iso17804GradeForTensile,
} from './hardness.js';

describe('ASTM E140 conversions', () => {
  it('reproduce the table rows', () => {
    // ASTM E140-12b as reproduced in a public test file (metallurgy.md §6.4 / §8.6, [F2]):
    // HRC 40 ↔ HV 392 ↔ HBW 371; HRC 50 ↔ HV 513 ↔ HBW 481 (±1 HRC).
    expect(Math.abs((hrcFromHv(392) as number) - 40)).toBeLessThanOrEqual(1);
    expect(hbwFromHv(392)).toBeCloseTo(371, 6);
    expect(Math.abs((hrcFromHv(513) as number) - 50)).toBeLessThanOrEqual(1);
    expect(hbwFromHv(513)).toBeCloseTo(481, 6);
    // The table's end rows and the HRC 30 row (same source, metallurgy.md §6.4 [F2]): HRC 20 ↔ HV 238; HRC 60 ↔ HV 697;
    // HBW 286 ↔ HV 302 (HRC 30).
    expect(hvFromHrc(20)).toBe(238);
    expect(hvFromHrc(60)).toBe(697);
    expect(hvFromHbw(286)).toBeCloseTo(302, 6);
  });

  it('interpolates between rows and refuses to extrapolate', () => {
    // HV 446 / 513 are the E140 rows of HRC 45 / 50 (metallurgy.md §6.4 [F2]); HV 200 and 750 lie outside its 238–697.
    const mid = hrcFromHv((446 + 513) / 2) as number;
    expect(mid).toBeGreaterThan(45);
    expect(mid).toBeLessThan(50);
    expect(hrcFromHv(200)).toBeNull();
    expect(hrcFromHv(750)).toBeNull();
    expect(hbwFromHv(Number.NaN)).toBeNull();
    // round trips
    expect(hvFromHrc(hrcFromHv(430) as number)).toBeCloseTo(430, 9);
  });
});

describe('ASTM A897 / ISO 17804 grades', () => {
  it('holds the A897M table', () => {
    // ASTM A897/A897M-16 Table 1 excerpt and A897M-03 (metallurgy.md §4.3, [F2]): UTS / YS / El. minima and typical HBW.
    const byGrade = Object.fromEntries(A897_GRADES.map((g) => [g.grade, g]));
    expect(byGrade['750/500/11']).toMatchObject({ tensileMinMPa: 750, yieldMinMPa: 500, elongationMinPct: 11, typicalHbw: [241, 302] });
    expect(byGrade['900/650/09']).toMatchObject({ tensileMinMPa: 900, yieldMinMPa: 650, elongationMinPct: 9, typicalHbw: [269, 341] });
    expect(byGrade['1050/750/07']).toMatchObject({ tensileMinMPa: 1050, yieldMinMPa: 750, elongationMinPct: 7, typicalHbw: [302, 375] });
    expect(byGrade['1200/850/04']).toMatchObject({ tensileMinMPa: 1200, yieldMinMPa: 850, elongationMinPct: 4, typicalHbw: [341, 444] });
    expect(byGrade['1400/1100/02']).toMatchObject({ tensileMinMPa: 1400, yieldMinMPa: 1100, elongationMinPct: 2, typicalHbw: [388, 477] });
    expect(byGrade['1600/1300/01']).toMatchObject({ tensileMinMPa: 1600, yieldMinMPa: 1300, elongationMinPct: 1, typicalHbw: [402, 512] });
    // [F2] inch designations (110/70/11 is from memory [M]).
    expect(byGrade['1200/850/04'].gradeInch).toBe('175/125/04');
  });

  it('places a tensile strength in the highest grade whose minimum it meets', () => {
    // Grade minima from the A897M table above (metallurgy.md §4.3 [F2]): 750, 1050 and 1600 MPa.
    expect(a897GradeForTensile(749)).toBeNull();
    expect(a897GradeForTensile(750)?.grade).toBe('750/500/11');
    expect(a897GradeForTensile(1100)?.grade).toBe('1050/750/07');
    expect(a897GradeForTensile(1700)?.grade).toBe('1600/1300/01');
    // ISO 17804 grade values are from memory [M] (metallurgy.md §4.3).
    expect(iso17804GradeForTensile(1100)).toBe('ISO17804/JS/1050-6');
    expect(iso17804GradeForTensile(700)).toBeNull();
  });

  it('ADI tensile read off the grade table rises with hardness through each grade minimum', () => {
    let prev = 0;
    for (let hbw = 230; hbw <= 520; hbw += 5) {
      const t = adiTensileFromHbw(hbw);
      expect(t).toBeGreaterThan(prev);
      prev = t;
    }
    // at the middle of a grade's typical range it returns that grade's minimum (our construction; 302–375 HBW is the
    // 1050/750/07 typical range of A897M, metallurgy.md §4.3 [F2], and informative only)
    expect(adiTensileFromHbw((302 + 375) / 2)).toBeCloseTo(1050, 9);
  });
});
