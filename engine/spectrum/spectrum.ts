import { z } from 'zod';

/** One centroided peak: `[m/z, intensity]`. */
export const PeakSchema = z.tuple([z.number().finite().positive(), z.number().finite().nonnegative()]);

/** Optional facts a chemist may add to a spectrum; some of them break ties between same-formula candidates. */
export const SpectrumMetadataSchema = z
  .object({
    /** Visible absorbance maximum of the chromatographic peak, nm (≈ 500–540 marks an anthocyanin). */
    lambdaMaxNm: z.number().finite().positive().optional(),
    /** A compound class the chemist already knows (matches the aglycone library's `class`). */
    compoundClass: z.string().min(1).max(100).optional(),
  })
  .catchall(z.union([z.string().max(2000), z.number().finite(), z.boolean()]));

/**
 * An MS2 spectrum as every reader produces it and as the HTTP API accepts it (JSON).
 * `charge` is signed (`1`, `-1`, `2`); `polarity` may be given instead of or beside it.
 */
export const SpectrumSchema = z
  .object({
    id: z.string().min(1).max(256),
    precursor: z.object({
      mz: z.number().finite().positive().max(20000),
      charge: z
        .number()
        .int()
        .min(-10)
        .max(10)
        .refine((z) => z !== 0, 'charge 0 is not an ion')
        .optional(),
      intensity: z.number().finite().nonnegative().optional(),
    }),
    polarity: z.enum(['positive', 'negative']).optional(),
    /** Retention time in seconds. */
    rt: z.number().finite().nonnegative().optional(),
    peaks: z.array(PeakSchema).max(200000),
    /** MS1 isotope envelope of the precursor, when known: `[m/z, intensity]` from the monoisotopic peak up. */
    isotopes: z.array(PeakSchema).max(20).optional(),
    metadata: SpectrumMetadataSchema.optional(),
  })
  .superRefine((s, ctx) => {
    const z0 = s.precursor.charge;
    if (z0 !== undefined && s.polarity !== undefined && z0 > 0 !== (s.polarity === 'positive')) {
      ctx.addIssue({
        code: 'custom',
        path: ['polarity'],
        message: `polarity ${s.polarity} contradicts charge ${z0}`,
      });
    }
  });

/** An MS2 spectrum (see {@link SpectrumSchema}). */
export type Spectrum = z.infer<typeof SpectrumSchema>;
/** One `[m/z, intensity]` peak. */
export type Peak = z.infer<typeof PeakSchema>;
/** Chemist-supplied facts about a spectrum. */
export type SpectrumMetadata = z.infer<typeof SpectrumMetadataSchema>;

/** Polarity of a spectrum: from its polarity, else the sign of its charge, else positive. */
export function spectrumPolarity(s: Spectrum): 'positive' | 'negative' {
  if (s.polarity) return s.polarity;
  if (s.precursor.charge !== undefined) return s.precursor.charge > 0 ? 'positive' : 'negative';
  return 'positive';
}
