// Generates large mzML 1.1 files of simulated MS2 spectra for benchmarks, streaming them to disk.
import { createWriteStream } from 'node:fs';
import { once } from 'node:events';
import {
  type BinaryCompression,
  type BinaryPrecision,
  encodeBinaryArray,
} from '../../formats/mzml-binary.js';
import { mulberry32 } from '../sim/prng.js';

/** What {@link generateMzml} writes. */
export interface GenerateMzmlOptions {
  /** MS2 spectra to write. */
  spectra: number;
  /** @defaultValue 1 */
  seed?: number;
  /** Fewest and most peaks per MS2 spectrum. @defaultValue [30, 100] */
  peaks?: [number, number];
  /** One MS1 survey scan (200 peaks) before every `ms1Every` MS2 spectra; 0 for none. @defaultValue 10 */
  ms1Every?: number;
  /** @defaultValue 'zlib' */
  compression?: BinaryCompression;
  /** @defaultValue 64 */
  precision?: BinaryPrecision;
}

/** What was written. */
export interface GenerateMzmlResult {
  bytes: number;
  ms2: number;
  ms1: number;
}

const HEADER = `<?xml version="1.0" encoding="utf-8"?>
<mzML xmlns="http://psi.hupo.org/ms/mzml" id="peel-bench-simulated" version="1.1.0">
  <!-- Simulated data written by Peel's benchmark generator (bench/gen/mzml.ts); not a measurement. -->
  <cvList count="2">
    <cv id="MS" fullName="PSI-MS" URI="https://purl.obolibrary.org/obo/ms.obo"/>
    <cv id="UO" fullName="Unit Ontology" URI="https://purl.obolibrary.org/obo/uo.obo"/>
  </cvList>
  <fileDescription>
    <fileContent>
      <cvParam cvRef="MS" accession="MS:1000579" name="MS1 spectrum" value=""/>
      <cvParam cvRef="MS" accession="MS:1000580" name="MSn spectrum" value=""/>
    </fileContent>
  </fileDescription>
  <referenceableParamGroupList count="2">
    <referenceableParamGroup id="ms1">
      <cvParam cvRef="MS" accession="MS:1000511" name="ms level" value="1"/>
      <cvParam cvRef="MS" accession="MS:1000130" name="positive scan" value=""/>
      <cvParam cvRef="MS" accession="MS:1000127" name="centroid spectrum" value=""/>
    </referenceableParamGroup>
    <referenceableParamGroup id="ms2">
      <cvParam cvRef="MS" accession="MS:1000511" name="ms level" value="2"/>
      <cvParam cvRef="MS" accession="MS:1000130" name="positive scan" value=""/>
      <cvParam cvRef="MS" accession="MS:1000127" name="centroid spectrum" value=""/>
    </referenceableParamGroup>
  </referenceableParamGroupList>
  <softwareList count="1">
    <software id="peel-bench" version="0">
      <cvParam cvRef="MS" accession="MS:1000799" name="custom unreleased software tool" value="peel bench generator"/>
    </software>
  </softwareList>
  <instrumentConfigurationList count="1">
    <instrumentConfiguration id="IC1"/>
  </instrumentConfigurationList>
  <dataProcessingList count="1">
    <dataProcessing id="DP1">
      <processingMethod order="1" softwareRef="peel-bench">
        <cvParam cvRef="MS" accession="MS:1000544" name="Conversion to mzML" value=""/>
      </processingMethod>
    </dataProcessing>
  </dataProcessingList>
  <run id="simulated" defaultInstrumentConfigurationRef="IC1">
`;

function arrays(
  mz: Float64Array,
  intensity: Float64Array,
  compression: BinaryCompression,
  precision: BinaryPrecision,
) {
  const type =
    precision === 64
      ? '<cvParam cvRef="MS" accession="MS:1000523" name="64-bit float" value=""/>'
      : '<cvParam cvRef="MS" accession="MS:1000521" name="32-bit float" value=""/>';
  const comp =
    compression === 'zlib'
      ? '<cvParam cvRef="MS" accession="MS:1000574" name="zlib compression" value=""/>'
      : '<cvParam cvRef="MS" accession="MS:1000576" name="no compression" value=""/>';
  const a = encodeBinaryArray(mz, compression, precision);
  const b = encodeBinaryArray(intensity, compression, precision);
  return `          <binaryDataArrayList count="2">
            <binaryDataArray encodedLength="${a.length}">
              ${type}
              ${comp}
              <cvParam cvRef="MS" accession="MS:1000514" name="m/z array" value="" unitCvRef="MS" unitAccession="MS:1000040" unitName="m/z"/>
              <binary>${a}</binary>
            </binaryDataArray>
            <binaryDataArray encodedLength="${b.length}">
              ${type}
              ${comp}
              <cvParam cvRef="MS" accession="MS:1000515" name="intensity array" value="" unitCvRef="MS" unitAccession="MS:1000131" unitName="number of counts"/>
              <binary>${b}</binary>
            </binaryDataArray>
          </binaryDataArrayList>
`;
}

/** Random sorted peaks between `lo` and `hi` m/z with intensities spread over four decades. */
function peaks(r: () => number, n: number, lo: number, hi: number): [Float64Array, Float64Array] {
  const mz = new Float64Array(n);
  const intensity = new Float64Array(n);
  for (let i = 0; i < n; i++) mz[i] = lo + r() * (hi - lo);
  mz.sort();
  for (let i = 0; i < n; i++) intensity[i] = Math.round(10 ** (2 + 4 * r()) * 100) / 100;
  return [mz, intensity];
}

/**
 * Writes an mzML file of simulated spectra to `path`, streaming (memory stays small at any size).
 * MS2 spectra carry a precursor (m/z 300–1,200, charge ±1 or 2 by polarity), a scan start time in
 * minutes, and 30–100 sorted peaks; MS1 survey scans are interleaved as a real run would have them.
 */
export async function generateMzml(path: string, options: GenerateMzmlOptions): Promise<GenerateMzmlResult> {
  const r = mulberry32(options.seed ?? 1);
  const [minPeaks, maxPeaks] = options.peaks ?? [30, 100];
  const ms1Every = options.ms1Every ?? 10;
  const compression = options.compression ?? 'zlib';
  const precision = options.precision ?? 64;
  const ms1Total = ms1Every > 0 ? Math.ceil(options.spectra / ms1Every) : 0;
  const out = createWriteStream(path);
  let bytes = 0;
  const write = async (s: string) => {
    bytes += Buffer.byteLength(s);
    if (!out.write(s)) await once(out, 'drain');
  };
  await write(HEADER);
  await write(`    <spectrumList count="${options.spectra + ms1Total}" defaultDataProcessingRef="DP1">\n`);
  let index = 0;
  let ms1 = 0;
  let batch = '';
  for (let i = 0; i < options.spectra; i++) {
    const minutes = (i / options.spectra) * 60;
    if (ms1Every > 0 && i % ms1Every === 0) {
      const [mz, intensity] = peaks(r, 200, 150, 1500);
      batch +=
        `      <spectrum index="${index++}" id="scan=${index}" defaultArrayLength="200">\n` +
        `        <referenceableParamGroupRef ref="ms1"/>\n` +
        `        <scanList count="1"><scan><cvParam cvRef="MS" accession="MS:1000016" name="scan start time" value="${minutes.toFixed(5)}" unitCvRef="UO" unitAccession="UO:0000031" unitName="minute"/></scan></scanList>\n` +
        arrays(mz, intensity, compression, precision) +
        '      </spectrum>\n';
      ms1++;
    }
    const precursor = 300 + r() * 900;
    const charge = r() < 0.8 ? 1 : 2;
    const n = minPeaks + Math.floor(r() * (maxPeaks - minPeaks + 1));
    const [mz, intensity] = peaks(r, n, 50, precursor * charge);
    batch +=
      `      <spectrum index="${index++}" id="scan=${index}" defaultArrayLength="${n}">\n` +
      `        <referenceableParamGroupRef ref="ms2"/>\n` +
      `        <scanList count="1"><scan><cvParam cvRef="MS" accession="MS:1000016" name="scan start time" value="${minutes.toFixed(5)}" unitCvRef="UO" unitAccession="UO:0000031" unitName="minute"/></scan></scanList>\n` +
      `        <precursorList count="1"><precursor><selectedIonList count="1"><selectedIon>\n` +
      `          <cvParam cvRef="MS" accession="MS:1000744" name="selected ion m/z" value="${precursor.toFixed(5)}" unitCvRef="MS" unitAccession="MS:1000040" unitName="m/z"/>\n` +
      `          <cvParam cvRef="MS" accession="MS:1000041" name="charge state" value="${charge}"/>\n` +
      `        </selectedIon></selectedIonList>\n` +
      `        <activation><cvParam cvRef="MS" accession="MS:1000133" name="collision-induced dissociation" value=""/>` +
      `<cvParam cvRef="MS" accession="MS:1000045" name="collision energy" value="30" unitCvRef="UO" unitAccession="UO:0000266" unitName="electronvolt"/></activation>\n` +
      `        </precursor></precursorList>\n` +
      arrays(mz, intensity, compression, precision) +
      '      </spectrum>\n';
    if (batch.length > 1 << 16) {
      await write(batch);
      batch = '';
    }
  }
  await write(`${batch}    </spectrumList>\n  </run>\n</mzML>\n`);
  out.end();
  await once(out, 'finish');
  return { bytes, ms2: options.spectra, ms1 };
}
