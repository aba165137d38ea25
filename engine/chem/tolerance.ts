/**
 * A mass tolerance: a relative window in ppm with an optional absolute floor in Da. The floor keeps the
 * window from shrinking below the instrument's absolute accuracy at low m/z (e.g. 10 ppm with a 2 mDa
 * floor on a Q-TOF; REFERENCE.md §6).
 */
export interface Tolerance {
  readonly ppm: number;
  /** Smallest half-width in Da. @defaultValue 0 */
  readonly floorDa?: number;
}

/** Half-width in Da of the tolerance window at `mz`: the larger of the ppm window and the floor. */
export function toleranceDa(mz: number, tol: Tolerance): number {
  const rel = (Math.abs(mz) * tol.ppm) / 1e6;
  const floor = tol.floorDa ?? 0;
  return Math.max(rel, floor);
}

/** Signed error in ppm of an observed value against a theoretical one: (observed − theoretical) / theoretical. */
export function ppmError(observed: number, theoretical: number): number {
  return ((observed - theoretical) / theoretical) * 1e6;
}

/**
 * Whether an observed m/z lies within tolerance of a theoretical one. The window is taken at the observed
 * value, as a decomposition does (the two differ by ppm², far below any instrument's accuracy).
 */
export function withinTolerance(observed: number, theoretical: number, tol: Tolerance): boolean {
  return Math.abs(observed - theoretical) <= toleranceDa(observed, tol);
}

/** Checks a tolerance for use; returns a message for the first problem, or undefined when it is usable. */
export function toleranceProblem(tol: Tolerance): string | undefined {
  if (!Number.isFinite(tol.ppm) || tol.ppm < 0) return `ppm must be a finite number ≥ 0, got ${tol.ppm}`;
  const f = tol.floorDa;
  if (f !== undefined && (!Number.isFinite(f) || f < 0))
    return `floorDa must be a finite number ≥ 0, got ${f}`;
  if (tol.ppm === 0 && !f) return 'tolerance is zero: give ppm > 0 or a floor in Da';
  return undefined;
}
