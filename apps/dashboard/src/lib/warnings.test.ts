import { describe, expect, it } from 'vitest';
import { plainWarning, plainWarnings } from './warnings.js';

describe('plain warnings', () => {
  it('drops the internal tag and starts with a capital', () => {
    expect(plainWarning('temperaturesC: Ms from the Andrews formula is outside its fitted range')).toBe('Ms from the Andrews formula is outside its fitted range');
    expect(plainWarning('advice: no bath temperature between 250 and 400 °C meets every criterion')).toBe('No bath temperature between 250 and 400 °C meets every criterion');
  });

  it('leaves sentences that merely contain a colon alone', () => {
    expect(plainWarning('Si + Al below 1.2 wt%: cementite may form')).toBe('Si + Al below 1.2 wt%: cementite may form');
  });

  it('shows a warning once even when the diagram and the advice both carry it', () => {
    const diagram = ['advice: no bath temperature meets every criterion', 'temperaturesC: Bs close to Ms'];
    const advice = ['advice: no bath temperature meets every criterion'];
    expect(plainWarnings(diagram, advice)).toEqual(['No bath temperature meets every criterion', 'Bs close to Ms']);
    expect(plainWarnings(null, undefined, [])).toEqual([]);
  });
});

describe('criterion ids in warnings', () => {
  it('become their plain names; other words stay', () => {
    expect(plainWarning('advice: no bath temperature meets every criterion; most often failing: min-bainite, max-fresh-martensite, min-film-to-block'))
      .toBe('No bath temperature meets every criterion; most often failing: minimum bainite (ausferrite) fraction, maximum fresh martensite, minimum film-to-block ratio');
    expect(plainWarning('no hold up to 240 min meets min-bainite, hardness at 300 °C')).toBe('No hold up to 240 min meets minimum bainite (ausferrite) fraction, hardness at 300 °C');
    expect(plainWarning('the min-bainite-like word and pre-min-bainite stay')).toBe('The min-bainite-like word and pre-min-bainite stay');
  });

  it('keep the case of a leading element symbol or acronym inside a sentence', () => {
    expect(plainWarning('advice: most often failing: min-si-plus-al, ms-margin'))
      .toBe('Most often failing: Si + Al keeps cementite out, bath above Ms by the margin');
  });
});
