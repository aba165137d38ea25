/**
 * mzTab-M 2.0.0-M writer.
 *
 * Follows "mzTab-M: exchange format for metabolomics results", version 2.0.0 (HUPO-PSI / Metabolomics
 * Standards Initiative, final release March 2019; Hoffmann et al. 2019, Anal Chem 91:3302 [mem]), section 6:
 * tab-separated lines with the prefixes MTD, SMH/SML, SFH/SMF, SEH/SME, COM; sections in that order with a
 * blank line between them; metadata keys in the order the specification lists them; table columns in the
 * order it gives, optional `opt_global_*` columns last; no empty cells ("null" for a missing value);
 * numbers as xs:decimal (no exponent).
 *
 * What Peel puts where:
 * - one SMF row (feature) per spectrum with a precursor: m/z, charge, retention time, ion type;
 * - one SME row (evidence) per ranked candidate and name that fits it (its aglycone and each same-formula
 *   alternative, "ambiguity is captured by different rows for the same input data"): rank (tied
 *   candidates share it), score and explained intensity as id_confidence_measure[1] and [2], the spectrum
 *   as spectra_ref, MS level 2;
 * - one SML row (summary) per annotated spectrum: the best candidate and every candidate tied with it,
 *   each name the data cannot separate listed with "|" (the specification's way to report ambiguity), and
 *   the confidence level on the scale of Schymanski et al. 2014 (PSI-MS MS:1002955) as reliability.
 *
 * The specification needs the metadata first, but the polarity of the runs is only known once every
 * spectrum is seen; rows are therefore spooled (in memory, then in temporary files past a threshold, so
 * memory stays flat) and the file is assembled in `end()`.
 */
import { mkdtemp, open, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Writable } from 'node:stream';
import {
  type Formula,
  formatFormula,
  formulaMz,
  neutralMass,
  parseFormula,
  subtractFormula,
} from '../engine/chem/formula.js';
import { ION_TYPES, resolveIonType } from '../engine/chem/ions.js';
import {
  type CandidateResult,
  DISCLAIMER,
  type RuleSetRef,
  type SpectrumResult,
  type Substituent,
} from '../engine/report/result.js';
import { candidateIonType, decimal, type ResultsWriter, WriterState, writeText } from './results-writer.js';

/** The version string every file carries. */
export const MZTAB_VERSION = '2.0.0-M';

/** One MS run (input file) the results come from. */
export interface MzTabMsRun {
  /** URI of the file (`file:///…`); "null" when unknown, as the specification asks. */
  location?: string;
  /** The input format: sets the spectrum reference style (mzML ids, or 0-based indices in peak lists). */
  format?: 'mzml' | 'mgf' | 'json';
  /** Assay name in the metadata. @defaultValue the file name, or `run N` */
  name?: string;
  /** Polarity, when known in advance; otherwise taken from the spectra. */
  polarity?: 'positive' | 'negative';
}

/** Options of {@link createMzTabWriter}. */
export interface MzTabWriterOptions {
  /** mzTab-ID. @defaultValue `peel-` + the first 12 hex digits of the rule set's sha256 */
  mzTabId?: string;
  /** Peel's version for software[1]. @defaultValue `unknown` */
  softwareVersion?: string;
  /** The runs (input files). @defaultValue one run of unknown location */
  msRuns?: readonly MzTabMsRun[];
  /** Which run (1-based) a result comes from. @defaultValue always 1 */
  msRunOf?: (result: SpectrumResult) => number;
  /**
   * The rule set's aglycone library. With it, each same-formula alternative is reported as its own molecule
   * (kaempferol glycoside C26H28O15 as [M+H]+ beside the cyanidin glycoside cation C26H29O15+ as [M]+);
   * without it, alternatives share the candidate's molecule. @defaultValue none
   */
  aglycones?: readonly { name: string; formula: string }[];
  /** URI of the rule set used, for database[1]-uri. @defaultValue `urn:peel-ruleset:NAME:VERSION` */
  rulesetUri?: string;
  /** Description text. @defaultValue a sentence naming the rule set, then the disclaimer */
  description?: string;
  /** Directory for spool files. @defaultValue the system's temporary directory */
  tmpDir?: string;
  /** Bytes of rows held in memory per section before spilling to a temporary file. @defaultValue 4 MiB */
  spoolBytes?: number;
}

/** Small molecule (summary) columns: mzTab-M 2.0 §6.3, in order, then Peel's optional columns. */
export const SML_COLUMNS = [
  'SML_ID',
  'SMF_ID_REFS',
  'database_identifier',
  'chemical_formula',
  'smiles',
  'inchi',
  'chemical_name',
  'uri',
  'theoretical_neutral_mass',
  'adduct_ions',
  'reliability',
  'best_id_confidence_measure',
  'best_id_confidence_value',
] as const;
const SML_OPT = ['opt_global_spectrum_id', 'opt_global_topology', 'opt_global_explained_intensity'] as const;

/** Small molecule feature columns: mzTab-M 2.0 §6.4, in order (abundance_assay[1-n] follow). */
export const SMF_COLUMNS = [
  'SMF_ID',
  'SME_ID_REFS',
  'SME_ID_REF_ambiguity_code',
  'adduct_ion',
  'isotopomer',
  'exp_mass_to_charge',
  'charge',
  'retention_time_in_seconds',
  'retention_time_in_seconds_start',
  'retention_time_in_seconds_end',
] as const;
const SMF_OPT = ['opt_global_spectrum_id'] as const;

/** Small molecule evidence columns: mzTab-M 2.0 §6.5, in order (id_confidence_measure[1-n], rank follow). */
export const SME_COLUMNS = [
  'SME_ID',
  'evidence_input_id',
  'database_identifier',
  'chemical_formula',
  'smiles',
  'inchi',
  'chemical_name',
  'uri',
  'derivatized_form',
  'adduct_ion',
  'exp_mass_to_charge',
  'charge',
  'theoretical_mass_to_charge',
  'spectra_ref',
  'identification_method',
  'ms_level',
] as const;
const SME_OPT = [
  'opt_global_spectrum_id',
  'opt_global_topology',
  'opt_global_mass_error_ppm',
  'opt_global_explained_intensity',
  'opt_global_confidence_level',
] as const;

/** Prefix of database identifiers: the aglycone library of the rule set. */
const DB_PREFIX = 'ruleset';
/** Score types, reported as user parameters (no CV term names Peel's scores). */
const CONFIDENCE_MEASURES = ['[,,Peel candidate score,]', '[,,explained intensity fraction,]'];
/**
 * PSI-MS CV release named in cv[1]-version ([mem]: a release that holds MS:1002955 "hr-ms compound
 * identification confidence level" and MS:1000511 "ms level").
 */
const PSI_MS_VERSION = '4.1.16';

const POLARITY_TERM = {
  positive: '[MS, MS:1000130, positive scan, ]',
  negative: '[MS, MS:1000129, negative scan, ]',
} as const;

/**
 * Writes mzTab-M 2.0.0-M (MTD, SML, SMF, SME sections). See the module comment for the mapping.
 */
export function createMzTabWriter(out: Writable, options: MzTabWriterOptions = {}): ResultsWriter {
  const state = new WriterState();
  const runs: MzTabMsRun[] = options.msRuns && options.msRuns.length > 0 ? [...options.msRuns] : [{}];
  const seenPolarity = runs.map(() => new Set<'positive' | 'negative'>());
  const spoolDir = lazySpoolDir(options.tmpDir ?? tmpdir());
  const limit = options.spoolBytes ?? 4 * 1024 * 1024;
  const sml = new Spool(spoolDir, 'sml', limit);
  const smf = new Spool(spoolDir, 'smf', limit);
  const sme = new Spool(spoolDir, 'sme', limit);
  const assayNulls = runs.map(() => 'null');
  const library = new Map((options.aglycones ?? []).map((a) => [a.name, a.formula]));
  let ref: RuleSetRef | undefined;
  let smlId = 0;
  let smfId = 0;
  let smeId = 0;

  const line = (prefix: string, cells: string[]) => `${prefix}\t${cells.join('\t')}\n`;

  return {
    format: 'mztab',
    contentType: 'text/tab-separated-values; charset=utf-8',
    async begin(ruleset: RuleSetRef) {
      state.begin();
      ref = ruleset;
    },
    async write(result: SpectrumResult) {
      state.write();
      const precursor = result.precursor;
      // SMF and SME rows need an experimental m/z (not nullable): a spectrum without a precursor has none.
      if (!precursor) return;
      const run = clampRun(options.msRunOf?.(result) ?? 1, runs.length);
      const polarity = polarityOf(precursor.charge, precursor.ionType);
      if (polarity) seenPolarity[run - 1]!.add(polarity);
      const ion = safeIon(precursor.ionType);
      const charge = String(Math.abs(precursor.charge) || 1);
      const spectraRef = spectrumRef(result, run, runs[run - 1]!);
      const evidenceInput = `ms_run[${run}]:${text(result.id)}`;
      const featureId = ++smfId;

      // Evidence: every ranked candidate, one row per name that fits it (its aglycone and the library's
      // same-formula alternatives); tied candidates share the rank of the one they tie with.
      const smeIds: number[] = [];
      let rank = 0;
      const ranks: number[] = [];
      const ids = result.candidates.map((c) => identities(c, result, library));
      result.candidates.forEach((c, i) => {
        rank = i > 0 && c.tiedWithPrevious ? rank : c.rank;
        ranks.push(rank);
        for (const m of ids[i]!) {
          const id = ++smeId;
          smeIds.push(id);
          sme.add(
            line('SME', [
              String(id),
              evidenceInput,
              dbId(m.name),
              m.formula,
              'null',
              'null',
              text(candidateName(m.name, c.substituents)),
              'null',
              'null',
              m.ion ?? 'null',
              decimal(precursor.mz, 6),
              charge,
              decimal(m.theoreticalMz ?? precursor.mz / (1 + c.ppm / 1e6), 6),
              spectraRef,
              `[,,Peel fragmentation-tree scoring, ${param(ruleset(ref!))}]`,
              '[MS, MS:1000511, ms level, 2]',
              num(c.score, 4),
              num(c.explainedIntensity, 4),
              String(rank),
              text(result.id),
              text(c.topology),
              num(c.ppm, 3),
              num(c.explainedIntensity, 4),
              String(c.confidenceLevel),
            ]),
          );
        }
      });

      smf.add(
        line('SMF', [
          String(featureId),
          smeIds.length > 0 ? smeIds.join('|') : 'null',
          smeIds.length > 1 ? '1' : 'null',
          ion ? ion.name : 'null',
          'null',
          decimal(precursor.mz, 6),
          charge,
          rtOf(result),
          'null',
          'null',
          ...assayNulls,
          text(result.id),
        ]),
      );

      if (result.status !== 'annotated' || result.candidates.length === 0) {
        await Promise.all([smf.settled(), sme.settled()]);
        return;
      }
      // Summary: the best candidate and those tied with it, each aglycone alternative as its own entry.
      const top = result.candidates.filter((_, i) => ranks[i] === ranks[0]);
      const entries = result.candidates.flatMap((_, i) => (ranks[i] === ranks[0] ? ids[i]! : []));
      const adducts = [...new Set(entries.map((e) => e.ion).filter((t) => t !== undefined))];
      const best = top[0]!;
      const bar = (xs: string[]) => xs.join('|');
      sml.add(
        line('SML', [
          String(++smlId),
          String(featureId),
          bar(entries.map((e) => dbId(e.name))),
          bar(entries.map((e) => e.formula)),
          bar(entries.map(() => 'null')),
          bar(entries.map(() => 'null')),
          bar(entries.map((e) => text(candidateName(e.name, e.substituents)))),
          bar(entries.map(() => 'null')),
          bar(entries.map((e) => (e.neutralMass === undefined ? 'null' : decimal(e.neutralMass, 6)))),
          adducts.length > 0 ? adducts.map((a) => text(a)).join('|') : 'null',
          String(best.confidenceLevel),
          CONFIDENCE_MEASURES[0]!,
          num(best.score, 4),
          ...assayNulls,
          'null',
          'null',
          text(result.id),
          text(best.topology),
          num(best.explainedIntensity, 4),
        ]),
      );
      // Wait for any spill to disk, so a fast producer cannot pile up rows in memory.
      await Promise.all([sml.settled(), smf.settled(), sme.settled()]);
    },
    async end() {
      state.end();
      try {
        await writeText(out, metadata(ref!, options, runs, seenPolarity));
        const assays = runs.map((_, i) => `abundance_assay[${i + 1}]`);
        await writeText(
          out,
          `\n${line('SMH', [...SML_COLUMNS, ...assays, 'abundance_study_variable[1]', 'abundance_variation_study_variable[1]', ...SML_OPT])}`,
        );
        await sml.drainTo(out);
        await writeText(out, `\n${line('SFH', [...SMF_COLUMNS, ...assays, ...SMF_OPT])}`);
        await smf.drainTo(out);
        const measures = CONFIDENCE_MEASURES.map((_, i) => `id_confidence_measure[${i + 1}]`);
        await writeText(out, `\n${line('SEH', [...SME_COLUMNS, ...measures, 'rank', ...SME_OPT])}`);
        await sme.drainTo(out);
      } finally {
        await Promise.all([sml.dispose(), smf.dispose(), sme.dispose()]);
        await spoolDir.remove();
      }
    },
    async abort() {
      state.abort();
      await Promise.all([sml.dispose(), smf.dispose(), sme.dispose()]);
      await spoolDir.remove();
    },
  };
}

function ruleset(ref: RuleSetRef): string {
  return `rule set ${ref.name} ${ref.version}`;
}

/** The metadata section, keys in the order of mzTab-M 2.0 §6.2. */
function metadata(
  ref: RuleSetRef,
  options: MzTabWriterOptions,
  runs: MzTabMsRun[],
  seen: Set<'positive' | 'negative'>[],
): string {
  const rows: [string, string][] = [];
  const add = (key: string, value: string) => rows.push([key, value]);
  add('mzTab-version', MZTAB_VERSION);
  add('mzTab-ID', text(options.mzTabId ?? `peel-${ref.sha256.slice(0, 12) || 'results'}`));
  add(
    'description',
    text(
      options.description ??
        `Putative glycoside annotations of MS2 spectra by Peel with ${ruleset(ref)} (sha256 ${ref.sha256}). ${DISCLAIMER}`,
    ),
  );
  add('software[1]', `[,,Peel, ${param(options.softwareVersion ?? 'unknown')}]`);
  add('software[1]-setting[1]', text(`${ruleset(ref)} sha256=${ref.sha256}`));
  add('quantification_method', '[,,no quantification performed,]');
  runs.forEach((run, i) => {
    const k = i + 1;
    add(`ms_run[${k}]-location`, text(run.location ?? 'null'));
    if (run.format === 'mzml') {
      add(`ms_run[${k}]-format`, '[MS, MS:1000584, mzML file, ]');
      add(`ms_run[${k}]-id_format`, '[MS, MS:1001530, mzML unique identifier, ]');
    } else if (run.format === 'mgf') {
      add(`ms_run[${k}]-id_format`, '[MS, MS:1000774, multiple peak list nativeID format, ]');
    }
    const polarities = run.polarity ? [run.polarity] : [...seen[i]!].sort();
    if (polarities.length === 0) add(`ms_run[${k}]-scan_polarity[1]`, 'null');
    polarities.forEach((p, j) => {
      add(`ms_run[${k}]-scan_polarity[${j + 1}]`, POLARITY_TERM[p]);
    });
  });
  runs.forEach((run, i) => {
    add(`assay[${i + 1}]`, text(run.name ?? fileName(run.location) ?? `run ${i + 1}`));
    add(`assay[${i + 1}]-ms_run_ref`, `ms_run[${i + 1}]`);
  });
  // Peel has no study design: one study variable named "undefined" that links every assay (§6.2).
  add('study_variable[1]', 'undefined');
  add('study_variable[1]-assay_refs', runs.map((_, i) => `assay[${i + 1}]`).join('|'));
  add('study_variable[1]-description', 'no study design: all spectra scored alike');
  add('cv[1]-label', 'MS');
  add('cv[1]-full_name', 'PSI-MS controlled vocabulary');
  add('cv[1]-version', PSI_MS_VERSION);
  add('cv[1]-uri', 'https://raw.githubusercontent.com/HUPO-PSI/psi-ms-CV/master/psi-ms.obo');
  add('cv[2]-label', 'UO');
  add('cv[2]-full_name', 'Units of Measurement Ontology');
  add('cv[2]-version', 'releases');
  add('cv[2]-uri', 'http://purl.obolibrary.org/obo/uo.owl');
  add('database[1]', `[,,Peel rule set ${param(ref.name)} aglycone library,]`);
  add('database[1]-prefix', DB_PREFIX);
  add('database[1]-version', text(ref.version));
  add(
    'database[1]-uri',
    text(options.rulesetUri ?? `urn:peel-ruleset:${uriPart(ref.name)}:${uriPart(ref.version)}`),
  );
  add('small_molecule-quantification_unit', '[,,no quantification performed,]');
  add('small_molecule_feature-quantification_unit', '[,,no quantification performed,]');
  add(
    'small_molecule-identification_reliability',
    '[MS, MS:1002955, hr-ms compound identification confidence level, ]',
  );
  CONFIDENCE_MEASURES.forEach((m, i) => {
    add(`id_confidence_measure[${i + 1}]`, m);
  });
  add('colunit-small_molecule_evidence', 'opt_global_mass_error_ppm=[UO, UO:0000169, parts per million, ]');
  return rows.map(([k, v]) => `MTD\t${k}\t${v}\n`).join('');
}

/** A cell's text: no tabs or line breaks (they would split the row), no "|" (it separates ambiguous entries). */
function text(s: string): string {
  const t = s
    .replace(/[\t\r\n]+/g, ' ')
    .replace(/\|/g, '/')
    .trim();
  return t.length === 0 ? 'null' : t;
}

/** Text inside a parameter `[label, accession, name, value]`: no commas or brackets. */
function param(s: string): string {
  return text(s)
    .replace(/[,[\]"]/g, ' ')
    .replace(/\s+/g, ' ')
    .trim();
}

function num(n: number | undefined, digits: number): string {
  return n === undefined || !Number.isFinite(n) ? 'null' : decimal(n, digits);
}

function uriPart(s: string): string {
  return encodeURIComponent(s);
}

function fileName(location: string | undefined): string | undefined {
  if (!location || location === 'null') return undefined;
  const parts = location.split(/[\\/]/);
  return parts[parts.length - 1] || undefined;
}

function clampRun(k: number, n: number): number {
  return Number.isInteger(k) && k >= 1 && k <= n ? k : 1;
}

function polarityOf(charge: number, ionType: string | null): 'positive' | 'negative' | undefined {
  if (charge > 0) return 'positive';
  if (charge < 0) return 'negative';
  if (ionType?.endsWith('+')) return 'positive';
  if (ionType?.endsWith('-')) return 'negative';
  return undefined;
}

function safeIon(name: string | null) {
  if (!name) return undefined;
  try {
    return resolveIonType(name);
  } catch {
    return undefined;
  }
}

/** Identifier of the library aglycone; an aglycone in no library is `ruleset:null` (§6.5 database_identifier). */
function dbId(aglycone: string): string {
  return aglycone === 'unknown' ? `${DB_PREFIX}:null` : `${DB_PREFIX}:${text(aglycone)}`;
}

/** A readable name for a candidate: `cyanidin + 2 Hex + Pen (C-linked) + p-coumaroyl`. */
export function candidateName(aglycone: string, substituents: readonly Substituent[]): string {
  const groups = new Map<string, number>();
  for (const s of substituents) {
    const key = s.linkage === 'C' ? `${s.residue} (C-linked)` : s.residue;
    groups.set(key, (groups.get(key) ?? 0) + 1);
  }
  const parts = [...groups].map(([k, n]) => (n > 1 ? `${n} ${k}` : k));
  return [aglycone, ...parts].join(' + ');
}

/** One name that fits a candidate, with the molecule it implies. */
interface Identity {
  name: string;
  substituents: readonly Substituent[];
  formula: string;
  neutralMass?: number;
  theoreticalMz?: number;
  /** Ion type name, when known. */
  ion?: string;
}

/** The candidate's aglycone and each same-formula alternative, each with its own molecule when the library says. */
function identities(c: CandidateResult, result: SpectrumResult, library: Map<string, string>): Identity[] {
  const ion = safeIon(candidateIonType(c, result) ?? null);
  const shared = moleculeOf(c, ion);
  return [c.aglycone.name, ...c.aglycone.alternatives].map((name) => {
    const own = swapAglycone(c, library.get(name));
    return {
      name,
      substituents: c.substituents,
      ...(own ?? { ...shared, ...(ion ? { ion: ion.name } : {}) }),
    };
  });
}

/**
 * The molecule of a candidate read with another library aglycone: the candidate's ion with its aglycone
 * ion (Y0) replaced by the library formula. A neutral aglycone gives a neutral molecule and the ion type
 * that bridges them ([M+H]+, [M-H]-…); a permanent cation (flavylium) gives a cation seen as [M]+.
 */
function swapAglycone(
  c: CandidateResult,
  libraryFormula: string | undefined,
): Omit<Identity, 'name' | 'substituents'> | undefined {
  if (!libraryFormula) return undefined;
  let ionF: Formula;
  let y0: Formula;
  let lib: Formula;
  try {
    ionF = parseFormula(c.formula);
    y0 = parseFormula(c.aglycone.formula);
    lib = parseFormula(libraryFormula);
  } catch {
    return undefined;
  }
  if (ionF.charge === 0 || y0.charge !== ionF.charge) return undefined;
  const delta = subtractFormula(y0, lib);
  const molecule = subtractFormula(ionF, delta);
  if (molecule.counts.some((n) => n < 0)) return undefined;
  const zeroDelta = delta.counts.every((n) => n === 0);
  const type = ION_TYPES.find(
    (t) =>
      t.multiplier === 1 &&
      t.charge === ionF.charge &&
      t.delta.counts.every((n, i) => n === delta.counts[i]) &&
      (zeroDelta ? molecule.charge === t.charge : molecule.charge === 0),
  );
  return {
    formula: formatFormula(molecule),
    neutralMass: neutralMass(molecule),
    theoreticalMz: formulaMz(ionF),
    ...(type ? { ion: type.name } : {}),
  };
}

/**
 * The molecule behind a candidate's ion formula: the ion minus what its ion type adds. A permanent cation
 * ([M]+, flavylium) keeps its charge and is written with "+"; a neutral molecule is written without.
 */
function moleculeOf(
  c: CandidateResult,
  ion: ReturnType<typeof safeIon>,
): { formula: string; neutralMass?: number; theoreticalMz?: number } {
  let f: Formula;
  try {
    f = parseFormula(c.formula);
  } catch {
    return { formula: text(c.formula) };
  }
  if (f.charge === 0) {
    // The engine gave the neutral molecule: the ion type gives the ion.
    if (ion?.multiplier !== 1) return { formula: formatFormula(f), neutralMass: neutralMass(f) };
    const ionF = { counts: f.counts.map((n, i) => n + ion.delta.counts[i]!), charge: ion.charge };
    return { formula: formatFormula(f), neutralMass: neutralMass(f), theoreticalMz: formulaMz(ionF) };
  }
  const theoreticalMz = formulaMz(f);
  if (ion?.multiplier !== 1) return { formula: formatFormula(f), theoreticalMz };
  const m = subtractFormula(f, { counts: ion.delta.counts, charge: ion.charge });
  if (m.counts.some((n) => n < 0)) return { formula: formatFormula(f), theoreticalMz };
  const molecule = ion.name === '[M]+' || ion.name === '[M]-' ? f : { counts: m.counts, charge: 0 };
  return { formula: formatFormula(molecule), neutralMass: neutralMass(molecule), theoreticalMz };
}

/**
 * The spectrum reference (§5.2, PSI-MS nativeID formats): mzML spectra by their id (MS:1001530), peak
 * lists by 0-based index (MS:1000774, `index=N`); a result with neither refers to its run only.
 */
function spectrumRef(result: SpectrumResult, run: number, info: MzTabMsRun): string {
  if (info.format === 'mzml') return `ms_run[${run}]:${text(result.id)}`;
  if (result.index !== undefined) return `ms_run[${run}]:index=${result.index}`;
  return `ms_run[${run}]`;
}

/** Retention time in seconds from the result's metadata (`rt`, `rtSeconds` or `RTINSECONDS`), else null. */
function rtOf(result: SpectrumResult): string {
  const md = result.metadata ?? {};
  for (const key of ['rt', 'rtSeconds', 'RTINSECONDS']) {
    const v = md[key];
    const n = typeof v === 'number' ? v : typeof v === 'string' ? Number(v) : Number.NaN;
    if (Number.isFinite(n) && n >= 0) return decimal(n, 3);
  }
  return 'null';
}

/** A temporary directory created on first use and removed at the end. */
function lazySpoolDir(base: string) {
  let dir: Promise<string> | undefined;
  return {
    get(): Promise<string> {
      dir ??= mkdtemp(join(base, 'peel-mztab-'));
      return dir;
    },
    async remove(): Promise<void> {
      if (!dir) return;
      const d = await dir.catch(() => undefined);
      dir = undefined;
      if (d) await rm(d, { recursive: true, force: true });
    },
  };
}

/** Rows of one section: held in memory up to a limit, then appended to a temporary file. */
class Spool {
  private parts: string[] = [];
  private size = 0;
  private file: string | undefined;
  private pending: Promise<void> = Promise.resolve();

  constructor(
    private readonly dir: ReturnType<typeof lazySpoolDir>,
    private readonly name: string,
    private readonly limit: number,
  ) {}

  add(row: string): void {
    this.parts.push(row);
    this.size += row.length;
    if (this.size >= this.limit) {
      const chunk = this.parts.join('');
      this.parts = [];
      this.size = 0;
      // Appends run one after another; a failure surfaces in drainTo().
      this.pending = this.pending.then(() => this.append(chunk));
    }
  }

  /** Resolves when every spill so far is on disk. */
  settled(): Promise<void> {
    return this.pending;
  }

  private async append(chunk: string): Promise<void> {
    this.file ??= join(await this.dir.get(), `${this.name}.tsv`);
    const handle = await open(this.file, 'a');
    try {
      await handle.write(chunk);
    } finally {
      await handle.close();
    }
  }

  async drainTo(out: Writable): Promise<void> {
    await this.pending;
    if (this.file) {
      const handle = await open(this.file, 'r');
      try {
        for await (const chunk of handle.createReadStream({ encoding: 'utf8', autoClose: false })) {
          await writeText(out, chunk as string);
        }
      } finally {
        await handle.close();
      }
    }
    await writeText(out, this.parts.join(''));
    this.parts = [];
    this.size = 0;
  }

  async dispose(): Promise<void> {
    await this.pending.catch(() => undefined);
    this.parts = [];
    if (this.file) await rm(this.file, { force: true });
    this.file = undefined;
  }
}
