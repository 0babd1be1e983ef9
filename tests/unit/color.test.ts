import { describe, expect, it } from 'vitest';
import { deltaE2000, deltaE76 } from '../../shared/compute/color';

type Row = [pair: number, L1: number, a1: number, b1: number, L2: number, a2: number, b2: number, dE00: number];

// Sharma, Wu & Dalal 2005, "The CIEDE2000 color-difference formula: implementation
// notes, supplementary test data, and mathematical observations", Color Res Appl
// 30(1):21-30, Table 1. Pair 1 is quoted in DESIGN.md; pairs 2, 3, 7, 17 and 25
// were quoted in the task brief (themselves from memory); all other rows are from
// my memory. Every row, from memory or not, is kept only because it agrees with
// culori to 4 decimals (none had to be dropped).
const sharma2005: Row[] = [
  [1, 50.0, 2.6772, -79.7751, 50.0, 0.0, -82.7485, 2.0425],
  [2, 50.0, 3.1571, -77.2803, 50.0, 0.0, -82.7485, 2.8615],
  [3, 50.0, 2.8361, -74.02, 50.0, 0.0, -82.7485, 3.4412],
  [4, 50.0, -1.3802, -84.2814, 50.0, 0.0, -82.7485, 1.0],
  [5, 50.0, -1.1848, -84.8006, 50.0, 0.0, -82.7485, 1.0],
  [6, 50.0, -0.9009, -85.5211, 50.0, 0.0, -82.7485, 1.0],
  [7, 50.0, 0.0, 0.0, 50.0, -1.0, 2.0, 2.3669],
  [8, 50.0, -1.0, 2.0, 50.0, 0.0, 0.0, 2.3669],
  [9, 50.0, 2.49, -0.001, 50.0, -2.49, 0.0009, 7.1792],
  [10, 50.0, 2.49, -0.001, 50.0, -2.49, 0.001, 7.1792],
  [11, 50.0, 2.49, -0.001, 50.0, -2.49, 0.0011, 7.2195],
  [12, 50.0, 2.49, -0.001, 50.0, -2.49, 0.0012, 7.2195],
  [13, 50.0, -0.001, 2.49, 50.0, 0.0009, -2.49, 4.8045],
  [14, 50.0, -0.001, 2.49, 50.0, 0.001, -2.49, 4.8045],
  [15, 50.0, -0.001, 2.49, 50.0, 0.0011, -2.49, 4.7461],
  [16, 50.0, 2.5, 0.0, 50.0, 0.0, -2.5, 4.3065],
  [17, 50.0, 2.5, 0.0, 73.0, 25.0, -18.0, 27.1492],
  [18, 50.0, 2.5, 0.0, 61.0, -5.0, 29.0, 22.8977],
  [19, 50.0, 2.5, 0.0, 56.0, -27.0, -3.0, 31.903],
  [20, 50.0, 2.5, 0.0, 58.0, 24.0, 15.0, 19.4535],
  [21, 50.0, 2.5, 0.0, 50.0, 3.1736, 0.5854, 1.0],
  [22, 50.0, 2.5, 0.0, 50.0, 3.2972, 0.0, 1.0],
  [23, 50.0, 2.5, 0.0, 50.0, 1.8634, 0.5757, 1.0],
  [24, 50.0, 2.5, 0.0, 50.0, 3.2592, 0.335, 1.0],
  [25, 60.2574, -34.0099, 36.2677, 60.4626, -34.1751, 39.4387, 1.2644],
  [26, 63.0109, -31.0961, -5.8663, 62.8187, -29.7946, -4.0864, 1.263],
  [27, 61.2901, 3.7196, -5.3901, 61.4292, 2.248, -4.962, 1.8731],
  [28, 35.0831, -44.1164, 3.7933, 35.0232, -40.0716, 1.5901, 1.8645],
  [29, 22.7233, 20.0904, -46.694, 23.0331, 14.973, -42.5619, 2.0373],
  [30, 36.4612, 47.858, 18.3852, 36.2715, 50.5065, 21.2231, 1.4146],
  [31, 90.8027, -2.0831, 1.441, 91.1528, -1.6435, 0.0447, 1.4441],
  [32, 90.9257, -0.5406, -0.9208, 88.6381, -0.8985, -0.7239, 1.5381],
  [33, 6.7747, -0.2908, -2.4247, 5.8714, -0.0985, -2.2286, 0.6377],
  [34, 2.0776, 0.0795, -1.135, 0.9033, -0.0636, -0.5514, 0.9082],
];

describe('deltaE2000 against Sharma, Wu & Dalal 2005, Table 1', () => {
  it.each(sharma2005)('pair %i', (_pair, L1, a1, b1, L2, a2, b2, expected) => {
    const d = deltaE2000({ L: L1, a: a1, b: b1 }, { L: L2, a: a2, b: b2 });
    expect(d).not.toBeNull();
    expect(Math.abs((d as number) - expected)).toBeLessThan(0.00005);
  });

  it('is symmetric and zero for identical readings (properties of the formula)', () => {
    const x = { L: 60.2574, a: -34.0099, b: 36.2677 };
    const y = { L: 60.4626, a: -34.1751, b: 39.4387 };
    expect(deltaE2000(x, y)).toBeCloseTo(deltaE2000(y, x) as number, 12);
    expect(deltaE2000(x, x)).toBe(0);
  });
});

describe('deltaE76', () => {
  it('is the Euclidean distance in L*a*b* (CIE 1976 definition)', () => {
    expect(deltaE76({ L: 50, a: 0, b: 0 }, { L: 53, a: 4, b: 0 })).toBeCloseTo(5, 12);
    expect(deltaE76({ L: 50, a: 1, b: 2 }, { L: 51, a: 3, b: 4 })).toBeCloseTo(3, 12); // sqrt(1 + 4 + 4)
    // Sharma pair 1: sqrt(2.6772² + 2.9734²) (the same definition, by hand).
    expect(deltaE76({ L: 50, a: 2.6772, b: -79.7751 }, { L: 50, a: 0, b: -82.7485 })).toBeCloseTo(
      Math.hypot(2.6772, 82.7485 - 79.7751),
      10,
    );
  });
});

describe('missing readings', () => {
  it('return null, not NaN', () => {
    expect(deltaE2000({ L: Number.NaN, a: 0, b: 0 }, { L: 50, a: 0, b: 0 })).toBeNull();
    expect(deltaE76({ L: 50, a: 0, b: Number.POSITIVE_INFINITY }, { L: 50, a: 0, b: 0 })).toBeNull();
  });
});
