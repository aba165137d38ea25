export type { CleanOptions, CleanSpectrum } from './clean.js';
export { C13_SPACING, cleanSpectrum, tolDa } from './clean.js';
export type { Peak, Spectrum, SpectrumMetadata } from './spectrum.js';
export { PeakSchema, SpectrumMetadataSchema, SpectrumSchema, spectrumPolarity } from './spectrum.js';
