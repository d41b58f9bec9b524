import { describe, expect, it } from 'vitest';
import { didYouMean, editDistance } from '../../../config/did-you-mean.js';

describe('editDistance (Levenshtein)', () => {
  // Textbook values of the Levenshtein distance (the classic worked examples, e.g. in Wikipedia's
  // "Levenshtein distance" article): kitten→sitting 3, flaw→lawn 2, saturday→sunday 3.
  it.each([
    ['kitten', 'sitting', 3],
    ['flaw', 'lawn', 2],
    ['saturday', 'sunday', 3],
    ['', 'abc', 3],
    ['same', 'same', 0],
  ])('%s → %s = %i', (a, b, distance) => {
    expect(editDistance(a, b)).toBe(distance);
    expect(editDistance(b, a)).toBe(distance);
  });
});

describe('didYouMean', () => {
  const keys = ['targets', 'maxPerRecord', 'temperature', 'seed', 'counting'];

  it('suggests the closest key for a typo, ignoring case', () => {
    expect(didYouMean('tagets', keys)).toBe('targets');
    expect(didYouMean('MaxPerRecords', keys)).toBe('maxPerRecord');
    expect(didYouMean('sed', keys)).toBe('seed');
  });

  it('stays silent when nothing is close', () => {
    expect(didYouMean('brokers', keys)).toBeUndefined();
    expect(didYouMean('x', [])).toBeUndefined();
  });
});
