/**
 * Decoy spectra: MS2 spectra that are not of glycosides, whose right answer is "unassigned" — peptides
 * (N-rich b/y ladders, immonium ions), lipids (fatty-acyl losses, CH2 ladders, head-group ions), aglycones
 * alone (only small losses), and random peaks.
 */
import { f, type Formula, formulaMz, subtract, sum, withCharge } from './chem.js';
import { aglyconeFragments, fragmentIon, type IdealPeak, precursorIon } from './fragments.js';
import type { Rng } from './prng.js';
import { libraryAglycone, pickAglyconeDef } from './structure.js';
import { AMINO_ACIDS, FATTY_ACIDS, type IonTypeName } from './tables.js';

/** Kinds of decoy. */
export type DecoyKind = 'peptide' | 'lipid' | 'aglycone-only' | 'random';
export const DECOY_KINDS: readonly DecoyKind[] = ['peptide', 'lipid', 'aglycone-only', 'random'];

/** A decoy before the instrument. */
export interface DecoyDraft {
  kind: DecoyKind;
  description: string;
  ionType: IonTypeName | 'unknown';
  charge: number;
  /** Precursor ion formula (undefined for random decoys). */
  precursor?: Formula;
  precursorMz: number;
  peaks: IdealPeak[];
  /** For aglycone-only decoys: the aglycone shown. */
  aglycone?: { name: string; neutralFormula: string };
}

/** A random decoy of the given kind (or any kind). */
export function randomDecoy(
  rng: Rng,
  kind: DecoyKind = rng.weighted([...DECOY_KINDS], (k) => DECOY_WEIGHTS[k]),
): DecoyDraft {
  switch (kind) {
    case 'peptide':
      return peptideDecoy(rng);
    case 'lipid':
      return lipidDecoy(rng);
    case 'aglycone-only':
      return aglyconeDecoy(rng);
    default:
      return randomPeaksDecoy(rng);
  }
}

const DECOY_WEIGHTS: Record<DecoyKind, number> = {
  peptide: 0.3,
  lipid: 0.25,
  'aglycone-only': 0.25,
  random: 0.2,
};

/** Tryptic-like peptide: b and y ladders, a ions, water/ammonia losses, immonium ions [trade]. */
function peptideDecoy(rng: Rng): DecoyDraft {
  const letters = Object.keys(AMINO_ACIDS).filter((x) => x !== 'K' && x !== 'R');
  const n = rng.int(4, 10);
  const seq: string[] = [];
  for (let i = 0; i < n - 1; i++) seq.push(rng.pick(letters));
  seq.push(rng.chance(0.5) ? 'K' : 'R');
  const res = seq.map((x) => f(AMINO_ACIDS[x]!));
  const m = sum(...res, f('H2O'));
  const negative = rng.chance(0.15);
  const doubly = !negative && n >= 7 && rng.chance(0.4);
  const ionType: IonTypeName = negative ? '[M-H]-' : doubly ? '[M+2H]2+' : '[M+H]+';
  const precursor = precursorIon(m, ionType);
  const peaks: IdealPeak[] = [
    { formula: precursor, intensity: rng.logUniform(0.05, 0.6), label: 'precursor', kind: 'precursor' },
  ];
  for (let i = 1; i < n; i++) {
    const bCore = sum(...res.slice(0, i));
    const yCore = sum(...res.slice(i), f('H2O'));
    // y ions dominate, strongest N-terminal to proline (the "proline effect") [trade].
    const yBoost = seq[i] === 'P' ? 4 : 1;
    if (negative) {
      peaks.push({
        formula: fragmentIon(yCore, ionType),
        intensity: rng.logUniform(0.05, 1),
        label: `y${n - i}`,
        kind: 'decoy',
      });
      continue;
    }
    const b = withCharge(sum(bCore, f('H')), 1);
    const y = withCharge(sum(yCore, f('H')), 1);
    if (i >= 2 && rng.chance(0.8))
      peaks.push({ formula: b, intensity: rng.logUniform(0.03, 0.6), label: `b${i}`, kind: 'decoy' });
    if (rng.chance(0.9))
      peaks.push({
        formula: y,
        intensity: yBoost * rng.logUniform(0.08, 1),
        label: `y${n - i}`,
        kind: 'decoy',
      });
    if (i >= 2 && rng.chance(0.3))
      peaks.push({
        formula: subtract(b, f('CO')),
        intensity: rng.logUniform(0.02, 0.2),
        label: `a${i}`,
        kind: 'decoy',
      });
    if (rng.chance(0.3))
      peaks.push({
        formula: subtract(y, f('NH3')),
        intensity: rng.logUniform(0.02, 0.2),
        label: `y${n - i}−NH3`,
        kind: 'decoy',
      });
    if (rng.chance(0.2))
      peaks.push({
        formula: subtract(b, f('H2O')),
        intensity: rng.logUniform(0.02, 0.15),
        label: `b${i}−H2O`,
        kind: 'decoy',
      });
    if (doubly && n - i >= 3 && rng.chance(0.5)) {
      peaks.push({
        formula: withCharge(sum(yCore, f('H2')), 2),
        intensity: rng.logUniform(0.05, 0.5),
        label: `y${n - i}(2+)`,
        kind: 'decoy',
      });
    }
  }
  if (!negative) {
    for (const aa of new Set(seq)) {
      // Immonium ion: residue − CO + H⁺.
      if (rng.chance(0.4)) {
        peaks.push({
          formula: withCharge(sum(subtract(f(AMINO_ACIDS[aa]!), f('CO')), f('H')), 1),
          intensity: rng.logUniform(0.02, 0.3),
          label: `imm(${aa})`,
          kind: 'decoy',
        });
      }
    }
  }
  return {
    kind: 'peptide',
    description: `peptide ${seq.join('')}`,
    ionType,
    charge: precursor.charge,
    precursor,
    precursorMz: mzOf(precursor),
    peaks,
  };
}

function fattyAcid(c: number, db: number): Formula {
  return f(`C${c}H${2 * c - 2 * db}O2`);
}

/** Triacylglycerol, phosphatidylcholine, phosphatidylethanolamine or free fatty acid [trade]. */
function lipidDecoy(rng: Rng): DecoyDraft {
  const kind = rng.weighted(
    ['TG', 'PC', 'PE', 'FA'] as const,
    (k) => ({ TG: 0.35, PC: 0.3, PE: 0.2, FA: 0.15 })[k],
  );
  const fas = Array.from({ length: kind === 'TG' ? 3 : kind === 'FA' ? 1 : 2 }, () => rng.pick(FATTY_ACIDS));
  const faF = fas.map((x) => fattyAcid(x.c, x.db));
  const peaks: IdealPeak[] = [];
  const name = `${kind}(${fas.map((x) => x.name).join('/')})`;
  const intensity = (lo: number, hi: number): number => rng.logUniform(lo, hi);
  const distinct = [...new Map(fas.map((x, i) => [x.name, faF[i]!])).entries()];
  let m: Formula;
  let ionType: IonTypeName;
  if (kind === 'TG') {
    m = subtract(sum(f('C3H8O3'), ...faF), f('H6O3'));
    ionType = rng.chance(0.7) ? '[M+NH4]+' : '[M+Na]+';
    for (const [fa, ff] of distinct) {
      // Diacylglycerol-like ion: loss of one fatty acid (and NH3) [trade].
      const ion =
        ionType === '[M+NH4]+'
          ? withCharge(subtract(sum(m, f('H')), ff), 1)
          : withCharge(subtract(sum(m, f('Na')), ff), 1);
      peaks.push({ formula: ion, intensity: intensity(0.3, 1), label: `[M−FA ${fa}]`, kind: 'decoy' });
      const acylium = withCharge(sum(subtract(ff, f('H2O')), f('H')), 1);
      if (rng.chance(0.5))
        peaks.push({ formula: acylium, intensity: intensity(0.02, 0.2), label: `RCO+ ${fa}`, kind: 'decoy' });
      if (rng.chance(0.4))
        peaks.push({
          formula: sum(acylium, f('C3H6O2')),
          intensity: intensity(0.02, 0.15),
          label: `MAG-like ${fa}`,
          kind: 'decoy',
        });
    }
  } else if (kind === 'PC') {
    m = subtract(sum(f('C8H20NO6P'), ...faF), f('H4O2'));
    ionType = '[M+H]+';
    peaks.push({ formula: f('C5H15NO4P+'), intensity: 1, label: 'phosphocholine', kind: 'decoy' });
    peaks.push({ formula: f('C5H14NO+'), intensity: intensity(0.01, 0.1), label: 'choline', kind: 'decoy' });
    peaks.push({ formula: f('C5H12N+'), intensity: intensity(0.005, 0.05), label: 'C5H12N+', kind: 'decoy' });
    peaks.push({
      formula: withCharge(subtract(sum(m, f('H')), f('C5H14NO4P')), 1),
      intensity: intensity(0.01, 0.1),
      label: '[M+H−183]',
      kind: 'decoy',
    });
    for (const [fa, ff] of distinct) {
      peaks.push({
        formula: withCharge(subtract(sum(m, f('H')), ff), 1),
        intensity: intensity(0.005, 0.05),
        label: `[M+H−FA ${fa}]`,
        kind: 'decoy',
      });
      peaks.push({
        formula: withCharge(subtract(sum(m, f('H')), subtract(ff, f('H2O'))), 1),
        intensity: intensity(0.005, 0.05),
        label: `[M+H−ketene ${fa}]`,
        kind: 'decoy',
      });
    }
  } else if (kind === 'PE') {
    m = subtract(sum(f('C5H14NO6P'), ...faF), f('H4O2'));
    ionType = '[M-H]-';
    peaks.push({
      formula: f('C2H7NO4P-'),
      intensity: intensity(0.02, 0.15),
      label: 'PE head group',
      kind: 'decoy',
    });
    peaks.push({
      formula: f('C5H11NO5P-'),
      intensity: intensity(0.02, 0.15),
      label: 'glycerophosphoethanolamine−H2O',
      kind: 'decoy',
    });
    for (const [fa, ff] of distinct) {
      peaks.push({
        formula: withCharge(subtract(ff, f('H')), -1),
        intensity: intensity(0.4, 1),
        label: `RCOO− ${fa}`,
        kind: 'decoy',
      });
      peaks.push({
        formula: withCharge(subtract(subtract(m, f('H')), ff), -1),
        intensity: intensity(0.03, 0.2),
        label: `[M−H−FA ${fa}]`,
        kind: 'decoy',
      });
      peaks.push({
        formula: withCharge(subtract(subtract(m, f('H')), subtract(ff, f('H2O'))), -1),
        intensity: intensity(0.03, 0.2),
        label: `[M−H−ketene ${fa}]`,
        kind: 'decoy',
      });
    }
  } else {
    m = faF[0]!;
    ionType = '[M-H]-';
    peaks.push({
      formula: withCharge(subtract(m, f('H3O')), -1),
      intensity: intensity(0.02, 0.2),
      label: '[M−H−H2O]',
      kind: 'decoy',
    });
    peaks.push({
      formula: withCharge(subtract(m, f('CHO2')), -1),
      intensity: intensity(0.01, 0.1),
      label: '[M−H−CO2]',
      kind: 'decoy',
    });
  }
  // CH2 ladders: alkenyl cations CnH(2n−1)⁺ in positive mode, carboxylate fragments in negative [from memory].
  const maxC = Math.max(...fas.map((x) => x.c));
  for (let c = 4; c < Math.min(maxC, 14); c++) {
    if (!rng.chance(0.6)) continue;
    const ion = ionType.endsWith('-') ? f(`C${c}H${2 * c - 1}O2-`) : f(`C${c}H${2 * c - 1}+`);
    peaks.push({
      formula: ion,
      intensity: intensity(0.005, 0.08) * (ionType.endsWith('-') ? 0.5 : 1),
      label: `CH2 ladder C${c}`,
      kind: 'decoy',
    });
  }
  const precursor = precursorIon(m, ionType);
  peaks.push({
    formula: precursor,
    intensity: rng.logUniform(0.02, 0.6),
    label: 'precursor',
    kind: 'precursor',
  });
  return {
    kind: 'lipid',
    description: `lipid ${name}`,
    ionType,
    charge: precursor.charge,
    precursor,
    precursorMz: mzOf(precursor),
    peaks,
  };
}

/** A library aglycone alone (no sugar): precursor plus its small losses and ring ions. */
function aglyconeDecoy(rng: Rng): DecoyDraft {
  const def = pickAglyconeDef(rng);
  const ag = libraryAglycone(def);
  const ionType: IonTypeName = ag.formula.charge === 1 ? '[M]+' : rng.chance(0.5) ? '[M+H]+' : '[M-H]-';
  const precursor = precursorIon(ag.formula, ionType);
  const peaks: IdealPeak[] = [{ formula: precursor, intensity: 1, label: 'precursor', kind: 'precursor' }];
  const y0 = fragmentIon(ag.formula, ionType);
  for (const x of aglyconeFragments({ aglycone: ag, sites: [] }, y0, ionType.endsWith('-'), false, rng)) {
    peaks.push({
      formula: x.formula,
      intensity: x.w * rng.uniform(0.5, 3),
      label: x.label,
      kind: 'aglycone',
    });
  }
  return {
    kind: 'aglycone-only',
    description: `${def.name} alone (not glycosylated)`,
    ionType,
    charge: precursor.charge,
    precursor,
    precursorMz: mzOf(precursor),
    peaks,
    aglycone: { name: def.name, neutralFormula: def.formula },
  };
}

/** Random peaks under a random precursor. */
function randomPeaksDecoy(rng: Rng): DecoyDraft {
  const charge = rng.chance(0.5) ? 1 : -1;
  const precursorMz = rng.uniform(180, 1200);
  const n = rng.int(8, 60);
  const peaks: IdealPeak[] = [
    { mz: precursorMz, intensity: rng.logUniform(0.05, 1), label: 'precursor', kind: 'precursor' },
  ];
  for (let i = 0; i < n; i++)
    peaks.push({
      mz: rng.uniform(50, precursorMz),
      intensity: rng.logUniform(0.01, 1),
      label: 'random',
      kind: 'decoy',
    });
  return { kind: 'random', description: 'random peaks', ionType: 'unknown', charge, precursorMz, peaks };
}

function mzOf(x: Formula): number {
  return formulaMz(x);
}
