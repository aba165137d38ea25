/**
 * Named structures for scenarios (the demo): glycosides written in the simulator's notation, e.g.
 * `glycoside('cyanidin', '3-O:Hex(Pen)')` or `glycoside('apigenin', '8-C:Hex')`, and the demo batch itself —
 * a fictional berry-pigment screening batch, every spectrum simulated.
 */
import { f } from './chem.js';
import { type SimulatedSpectrum, simulateDecoy, simulateGlycoside } from './generate.js';
import { Rng } from './prng.js';
import {
  type AglyconeInstance,
  aglyconeByName,
  type GlycosideStructure,
  libraryAglycone,
  type SugarNode,
} from './structure.js';
import { ACYL_NAMES, type AcylName, type IonTypeName, RESIDUE_NAMES, type ResidueName } from './tables.js';

/** Parses one sugar tree: `Hex[p-coumaroyl](dHex,Pen(Hex))`; the root gets `rootLinkage`. */
export function parseTree(text: string, rootLinkage: 'O' | 'C' = 'O'): SugarNode {
  let i = 0;
  const node = (linkage: 'O' | 'C'): SugarNode => {
    let name = '';
    while (i < text.length && !'[](),'.includes(text[i]!)) name += text[i++];
    name = name.trim();
    if (!RESIDUE_NAMES.includes(name as ResidueName))
      throw new RangeError(`unknown residue "${name}" in "${text}"`);
    const n: SugarNode = { residue: name as ResidueName, linkage, children: [], acyls: [] };
    if (text[i] === '[') {
      const end = text.indexOf(']', i);
      for (const a of text.slice(i + 1, end).split(',')) {
        const acyl = a.trim();
        if (!ACYL_NAMES.includes(acyl as AcylName))
          throw new RangeError(`unknown acyl "${acyl}" in "${text}"`);
        n.acyls.push(acyl as AcylName);
      }
      i = end + 1;
    }
    if (text[i] === '(') {
      i++;
      for (;;) {
        n.children.push(node('O'));
        const ch = text[i++];
        if (ch === ')') break;
        if (ch !== ',') throw new RangeError(`bad tree "${text}"`);
      }
    }
    return n;
  };
  const root = node(rootLinkage);
  if (i !== text.length) throw new RangeError(`trailing text in "${text}"`);
  return root;
}

/** A glycoside from an aglycone (library name or instance) and sites `3-O:Hex(dHex); 5-O:Hex`. */
export function glycoside(aglycone: string | AglyconeInstance, sites: string): GlycosideStructure {
  const ag = typeof aglycone === 'string' ? libraryAglycone(aglyconeByName(aglycone)) : aglycone;
  return {
    aglycone: ag,
    sites: sites.split(';').map((part) => {
      const m = /^\s*([^:]+?)-(O|C)\s*:\s*(.+?)\s*$/.exec(part);
      if (!m) throw new RangeError(`bad site "${part}"`);
      return { position: m[1]!, root: parseTree(m[3]!.replace(/\s+/g, ''), m[2] as 'O' | 'C') };
    }),
  };
}

/** One compound of the demo batch. */
interface DemoCompound {
  key: string;
  structure: GlycosideStructure;
  ionType: IonTypeName;
  /** Retention time, s. */
  rt: number;
  /** In how many of the selections it is found (the first n). */
  samples: number;
}

/** Fictional scenario text, written into the demo files. */
export const DEMO_SCENARIO = [
  'Scenario (fictional): Fernhollow Plant Metabolomics Core, batch FH-2026-031 for the Brambleton berry breeding programme.',
  'Pigment screening of six breeding selections (BB-01 … BB-06) of a hybrid bramble berry: anthocyanins in positive mode,',
  'flavonol and phenolic glycosides in negative mode, plus a few spectra that are not glycosides.',
  'Every name of place, programme and selection is invented; every spectrum is simulated.',
];

const SELECTIONS = ['BB-01', 'BB-02', 'BB-03', 'BB-04', 'BB-05', 'BB-06'];

/** An invented 8-prenylkaempferol-like aglycone: in no common library, so the expected answer is `unknown`. */
function prenylKaempferol(): AglyconeInstance {
  const scaffold = aglyconeByName('kaempferol');
  return {
    name: 'unknown',
    class: 'flavonol',
    formula: f('C20H18O6'),
    library: false,
    scaffold,
    modification: 'kaempferol +C5H8 (prenyl) on ring A',
    shift: { ring: 'A', delta: f('C5H8') },
  };
}

function demoCompounds(): DemoCompound[] {
  const c = (
    key: string,
    structure: GlycosideStructure,
    ionType: IonTypeName,
    rt: number,
    samples: number,
  ): DemoCompound => ({
    key,
    structure,
    ionType,
    rt,
    samples,
  });
  return [
    // Positive mode: anthocyanins as flavylium [M]+, one flavonol [M+H]+ isobaric with a cyanidin dihexoside.
    c('cy-hex', glycoside('cyanidin', '3-O:Hex'), '[M]+', 412, 6),
    c('cy-hex-pen', glycoside('cyanidin', '3-O:Hex(Pen)'), '[M]+', 398, 6),
    c('cy-hex-dhex', glycoside('cyanidin', '3-O:Hex(dHex)'), '[M]+', 431, 5),
    c('cy-hex-hex', glycoside('cyanidin', '3-O:Hex; 5-O:Hex'), '[M]+', 355, 3),
    c('dp-hex', glycoside('delphinidin', '3-O:Hex'), '[M]+', 376, 4),
    c('pn-hex', glycoside('peonidin', '3-O:Hex'), '[M]+', 470, 3),
    c('mv-hex-coum', glycoside('malvidin', '3-O:Hex[p-coumaroyl]'), '[M]+', 655, 2),
    c('cy-hex-mal', glycoside('cyanidin', '3-O:Hex[malonyl]'), '[M]+', 512, 3),
    c('qu-rut-pos', glycoside('quercetin', '3-O:Hex(dHex)'), '[M+H]+', 540, 2),
    // Negative mode: flavonol and phenolic glycosides.
    c('qu-hex', glycoside('quercetin', '3-O:Hex'), '[M-H]-', 560, 6),
    c('qu-hexa', glycoside('quercetin', '3-O:HexA'), '[M-H]-', 566, 4),
    c('km-rut', glycoside('kaempferol', '3-O:Hex(dHex)'), '[M-H]-', 590, 4),
    c('my-hex', glycoside('myricetin', '3-O:Hex'), '[M+HCOO]-', 505, 3),
    c('ir-hex', glycoside('isorhamnetin', '3-O:Hex'), '[M-H]-', 640, 3),
    c('caf-hex', glycoside('caffeic acid', '4-O:Hex'), '[M-H]-', 250, 4),
    c('ap-c-hex', glycoside('apigenin', '8-C:Hex'), '[M-H]-', 602, 2),
    c('unk-hex', glycoside(prenylKaempferol(), '3-O:Hex(dHex)'), '[M-H]-', 810, 2),
  ];
}

/**
 * The demo batch: the compounds above across the selections that contain them, plus four decoys, each
 * spectrum from its own seeded stream. Ids read `FH031-BB-03-pos-0412` (selection, polarity, retention time).
 */
export function buildDemoSet(seed: number | string = 'fernhollow-2026'): SimulatedSpectrum[] {
  const out: SimulatedSpectrum[] = [];
  for (const comp of demoCompounds()) {
    for (let k = 0; k < comp.samples; k++) {
      const selection = SELECTIONS[k]!;
      const rng = new Rng(`${seed}:${comp.key}:${selection}`);
      const pol = comp.ionType.endsWith('-') ? 'neg' : 'pos';
      const rt = comp.rt + rng.normal(0, 2);
      const id = `FH031-${selection}-${pol}-${String(Math.round(rt)).padStart(4, '0')}`;
      out.push(
        simulateGlycoside(id, comp.structure, comp.ionType, rng, {
          rt,
          includePeaks: true,
          coIsolationFraction: 0.08,
          lambdaFraction: comp.structure.aglycone.class === 'anthocyanidin' ? 0.7 : 0.3,
          envelopeFraction: 0.6,
          metadata: { sample: `FH-2026-031/${selection}`, selection },
        }),
      );
    }
  }
  const decoys: [string, 'peptide' | 'lipid' | 'aglycone-only' | 'random', string][] = [
    ['d1', 'peptide', 'BB-02'],
    ['d2', 'lipid', 'BB-04'],
    ['d3', 'aglycone-only', 'BB-01'],
    ['d4', 'random', 'BB-05'],
  ];
  for (const [key, kind, selection] of decoys) {
    const rng = new Rng(`${seed}:${key}`);
    const rt = rng.uniform(200, 900);
    const tmp = simulateDecoy(
      'tmp',
      rng,
      { rt, includePeaks: true, metadata: { sample: `FH-2026-031/${selection}`, selection } },
      kind,
    );
    const pol = tmp.spectrum.polarity === 'negative' ? 'neg' : 'pos';
    const id = `FH031-${selection}-${pol}-${String(Math.round(rt)).padStart(4, '0')}`;
    tmp.spectrum.id = id;
    tmp.truth.id = id;
    out.push(tmp);
  }
  const seen = new Map<string, number>();
  for (const x of out) {
    const n = seen.get(x.spectrum.id) ?? 0;
    seen.set(x.spectrum.id, n + 1);
    if (n > 0) x.spectrum.id = x.truth.id = `${x.spectrum.id}-${n + 1}`;
  }
  return out.sort((a, b) => a.spectrum.id.localeCompare(b.spectrum.id));
}
