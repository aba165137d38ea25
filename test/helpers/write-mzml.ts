// Writes small mzML 1.1 documents from spectra, for reader tests (the inverse of formats/mzml.ts).
import type { Spectrum } from '../../engine/spectrum/spectrum.js';
import {
  type BinaryCompression,
  type BinaryPrecision,
  encodeBinaryArray,
} from '../../formats/mzml-binary.js';

/** How {@link writeMzml} lays the document out. */
export interface WriteMzmlOptions {
  /** @defaultValue 'zlib' */
  compression?: BinaryCompression;
  /** @defaultValue 64 */
  precision?: BinaryPrecision;
  /** Wrap in `<indexedmzML>` with a byte-offset index. @defaultValue false */
  indexed?: boolean;
  /** Put an MS1 survey scan before every MS2 spectrum. @defaultValue false */
  ms1?: boolean;
  /** Give MS level and polarity through `referenceableParamGroupRef`s. @defaultValue false */
  paramGroups?: boolean;
  /** Unit of scan start times. @defaultValue 'second' */
  rtUnit?: 'second' | 'minute';
  /** Extra XML placed inside each MS2 spectrum's first binaryDataArray (e.g. a Numpress term), by spectrum position. */
  arrayExtra?: (i: number) => string;
}

const esc = (s: string) =>
  s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');

function cv(accession: string, name: string, value = '', unit?: [string, string, string]): string {
  const u = unit ? ` unitCvRef="${unit[0]}" unitAccession="${unit[1]}" unitName="${unit[2]}"` : '';
  return `<cvParam cvRef="${accession.slice(0, accession.indexOf(':'))}" accession="${accession}" name="${name}" value="${esc(value)}"${u}/>`;
}

function arrays(
  mz: number[],
  intensity: number[],
  compression: BinaryCompression,
  precision: BinaryPrecision,
  extra: string,
): string {
  const type = precision === 64 ? cv('MS:1000523', '64-bit float') : cv('MS:1000521', '32-bit float');
  const comp =
    compression === 'zlib' ? cv('MS:1000574', 'zlib compression') : cv('MS:1000576', 'no compression');
  const one = (values: number[], term: string, x: string) => {
    const b64 = encodeBinaryArray(values, compression, precision);
    return `<binaryDataArray encodedLength="${b64.length}">\n${type}\n${comp}\n${term}${x}\n<binary>${b64}</binary>\n</binaryDataArray>`;
  };
  return (
    `<binaryDataArrayList count="2">\n` +
    one(mz, cv('MS:1000514', 'm/z array', '', ['MS', 'MS:1000040', 'm/z']), extra) +
    '\n' +
    one(intensity, cv('MS:1000515', 'intensity array', '', ['MS', 'MS:1000131', 'number of counts']), '') +
    `\n</binaryDataArrayList>`
  );
}

/** An mzML document holding `spectra` as MS2 spectra (and MS1 scans when asked). */
export function writeMzml(spectra: readonly Spectrum[], options: WriteMzmlOptions = {}): string {
  const compression = options.compression ?? 'zlib';
  const precision = options.precision ?? 64;
  const rtUnit = options.rtUnit ?? 'second';
  const blocks: { id: string; xml: string }[] = [];
  let index = 0;
  spectra.forEach((s, i) => {
    if (options.ms1) {
      const id = `survey=${i}`;
      blocks.push({
        id,
        xml:
          `<spectrum index="${index++}" id="${id}" defaultArrayLength="3">\n` +
          (options.paramGroups
            ? '<referenceableParamGroupRef ref="ms1"/>\n'
            : `${cv('MS:1000511', 'ms level', '1')}\n${cv('MS:1000130', 'positive scan')}\n`) +
          arrays([100, 200, 300], [1, 2, 3], compression, precision, '') +
          '\n</spectrum>',
      });
    }
    const negative = s.polarity === 'negative' || (s.precursor.charge ?? 1) < 0;
    const level = options.paramGroups
      ? `<referenceableParamGroupRef ref="${negative ? 'ms2neg' : 'ms2pos'}"/>\n`
      : `${cv('MS:1000511', 'ms level', '2')}\n${negative ? cv('MS:1000129', 'negative scan') : cv('MS:1000130', 'positive scan')}\n`;
    const rt =
      s.rt === undefined
        ? ''
        : rtUnit === 'second'
          ? cv('MS:1000016', 'scan start time', String(s.rt), ['UO', 'UO:0000010', 'second'])
          : cv('MS:1000016', 'scan start time', String(s.rt / 60), ['UO', 'UO:0000031', 'minute']);
    const charge =
      s.precursor.charge === undefined
        ? ''
        : `\n${cv('MS:1000041', 'charge state', String(Math.abs(s.precursor.charge)))}`;
    const intensity =
      s.precursor.intensity === undefined
        ? ''
        : `\n${cv('MS:1000042', 'peak intensity', String(s.precursor.intensity))}`;
    blocks.push({
      id: s.id,
      xml:
        `<spectrum index="${index++}" id="${esc(s.id)}" defaultArrayLength="${s.peaks.length}">\n` +
        level +
        cv('MS:1000127', 'centroid spectrum') +
        `\n<scanList count="1">\n${cv('MS:1000795', 'no combination')}\n<scan>\n${rt}\n</scan>\n</scanList>\n` +
        `<precursorList count="1">\n<precursor>\n<selectedIonList count="1">\n<selectedIon>\n` +
        cv('MS:1000744', 'selected ion m/z', String(s.precursor.mz), ['MS', 'MS:1000040', 'm/z']) +
        charge +
        intensity +
        `\n</selectedIon>\n</selectedIonList>\n<activation>\n${cv('MS:1000133', 'collision-induced dissociation')}\n` +
        `${cv('MS:1000045', 'collision energy', '30', ['UO', 'UO:0000266', 'electronvolt'])}\n</activation>\n` +
        `</precursor>\n</precursorList>\n` +
        arrays(
          s.peaks.map((p) => p[0]),
          s.peaks.map((p) => p[1]),
          compression,
          precision,
          options.arrayExtra?.(i) ?? '',
        ) +
        '\n</spectrum>',
    });
  });

  const groups = options.paramGroups
    ? `<referenceableParamGroupList count="3">
<referenceableParamGroup id="ms1">${cv('MS:1000511', 'ms level', '1')}${cv('MS:1000130', 'positive scan')}</referenceableParamGroup>
<referenceableParamGroup id="ms2pos">${cv('MS:1000511', 'ms level', '2')}${cv('MS:1000130', 'positive scan')}</referenceableParamGroup>
<referenceableParamGroup id="ms2neg">${cv('MS:1000511', 'ms level', '2')}${cv('MS:1000129', 'negative scan')}</referenceableParamGroup>
</referenceableParamGroupList>
`
    : '';
  const ns = 'xmlns="http://psi.hupo.org/ms/mzml" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance"';
  let head = `<?xml version="1.0" encoding="utf-8"?>\n`;
  if (options.indexed) head += `<indexedmzML ${ns}>\n`;
  head +=
    `<mzML ${options.indexed ? '' : `${ns} `}id="test" version="1.1.0">\n` +
    `<cvList count="2">\n<cv id="MS" fullName="PSI-MS" version="4.1.0" URI="https://purl.obolibrary.org/obo/ms.obo"/>\n` +
    `<cv id="UO" fullName="Unit Ontology" URI="https://purl.obolibrary.org/obo/uo.obo"/>\n</cvList>\n` +
    `<fileDescription>\n<fileContent>\n${cv('MS:1000580', 'MSn spectrum')}\n</fileContent>\n</fileDescription>\n` +
    groups +
    `<softwareList count="1">\n<software id="peel-test" version="0">\n${cv('MS:1000799', 'custom unreleased software tool', 'peel test helper')}\n</software>\n</softwareList>\n` +
    `<instrumentConfigurationList count="1">\n<instrumentConfiguration id="IC1">\n</instrumentConfiguration>\n</instrumentConfigurationList>\n` +
    `<dataProcessingList count="1">\n<dataProcessing id="DP1">\n<processingMethod order="1" softwareRef="peel-test">\n` +
    `${cv('MS:1000544', 'Conversion to mzML')}\n</processingMethod>\n</dataProcessing>\n</dataProcessingList>\n` +
    `<run id="run1" defaultInstrumentConfigurationRef="IC1">\n` +
    `<spectrumList count="${blocks.length}" defaultDataProcessingRef="DP1">\n`;
  let doc = head;
  const offsets: { id: string; offset: number }[] = [];
  for (const b of blocks) {
    offsets.push({ id: b.id, offset: Buffer.byteLength(doc) });
    doc += `${b.xml}\n`;
  }
  doc += `</spectrumList>\n</run>\n</mzML>\n`;
  if (options.indexed) {
    const indexOffset = Buffer.byteLength(doc);
    doc +=
      `<indexList count="1">\n<index name="spectrum">\n` +
      offsets.map((o) => `<offset idRef="${esc(o.id)}">${o.offset}</offset>`).join('\n') +
      `\n</index>\n</indexList>\n<indexListOffset>${indexOffset}</indexListOffset>\n</indexedmzML>\n`;
  }
  return doc;
}
