import { describe, expect, it } from 'vitest';
import { ppmError, toleranceDa, toleranceProblem, withinTolerance } from '../../../engine/chem/index.js';

describe('tolerance', () => {
  it('is the larger of the ppm window and the absolute floor', () => {
    expect(toleranceDa(1000, { ppm: 5 })).toBeCloseTo(0.005, 12);
    // At m/z 100, 10 ppm is 1 mDa; a 2 mDa floor (REFERENCE.md §6, Q-TOF MS2 practice [mem]) wins.
    expect(toleranceDa(100, { ppm: 10, floorDa: 0.002 })).toBe(0.002);
    expect(toleranceDa(1000, { ppm: 10, floorDa: 0.002 })).toBeCloseTo(0.01, 12);
  });

  it('reports signed ppm errors against the theoretical value', () => {
    // 449.1084 printed by uncorrected tables vs 449.10784 (REFERENCE.md §1 [calc]): +1.25 ppm
    expect(ppmError(449.1084, 449.10784)).toBeCloseTo(1.2469, 3);
    expect(ppmError(449.10784, 449.1084)).toBeLessThan(0);
  });

  it('checks membership at the window edges', () => {
    expect(withinTolerance(500.0025, 500, { ppm: 5 })).toBe(true);
    expect(withinTolerance(500.0026, 500, { ppm: 5 })).toBe(false);
    expect(withinTolerance(100.0019, 100, { ppm: 5, floorDa: 0.002 })).toBe(true);
  });

  it('names unusable tolerances', () => {
    expect(toleranceProblem({ ppm: 5 })).toBeUndefined();
    expect(toleranceProblem({ ppm: -1 })).toBeDefined();
    expect(toleranceProblem({ ppm: Number.NaN })).toBeDefined();
    expect(toleranceProblem({ ppm: 0 })).toBeDefined();
    expect(toleranceProblem({ ppm: 0, floorDa: 0.01 })).toBeUndefined();
  });
});
