import fc from 'fast-check';
import type { Formula } from '../../../engine/chem/index.js';

/** Random formulas over every element of the table (at least one atom), charge −3..3. */
export const formulaArb = (maxCharge = 3): fc.Arbitrary<Formula> =>
  fc
    .record({
      counts: fc.tuple(
        fc.integer({ min: 0, max: 80 }), // C
        fc.integer({ min: 0, max: 160 }), // H
        fc.integer({ min: 0, max: 12 }), // N
        fc.integer({ min: 0, max: 40 }), // O
        fc.integer({ min: 0, max: 4 }), // P
        fc.integer({ min: 0, max: 4 }), // S
        fc.integer({ min: 0, max: 2 }), // Na
        fc.integer({ min: 0, max: 2 }), // K
        fc.integer({ min: 0, max: 4 }), // Cl
      ),
      charge: fc.integer({ min: -maxCharge, max: maxCharge }),
    })
    .filter((f) => f.counts.some((n) => n > 0))
    .map((f) => ({ counts: [...f.counts], charge: f.charge }));
