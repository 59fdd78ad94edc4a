/**
 * The intensity names of a measured powder profile in a CIF (the powder dictionary, IUCr
 * cif_pd.dic), kept apart from the reader so the app can tell a profile from a structure file
 * without loading the reader.
 */

/** Intensity columns read, best first: measured counts, then measured, then processed intensities (never calculated ones). */
export const PROFILE_INTENSITY_NAMES = [
  '_pd_meas_counts_total',
  '_pd_meas_intensity_total',
  '_pd_proc_intensity_total',
  '_pd_proc_intensity_net',
] as const;

/**
 * Whether a CIF's text names a measured powder profile: one of PROFILE_INTENSITY_NAMES in its DDL1
 * spelling or its DDLm one (`_pd_meas.counts_total`).
 * @param text the file's text
 * @returns true when a profile intensity name appears as a data name
 */
export function namesPowderProfile(text: string): boolean {
  if (typeof text !== 'string') return false;
  const lower = text.toLowerCase();
  return PROFILE_INTENSITY_NAMES.some((n) => {
    const ddlm = n.replace(/^(_pd_(?:meas|proc))_/, '$1.');
    return new RegExp(`(^|\\s)(${n}|${ddlm.replace('.', '\\.')})(\\s|$)`).test(lower);
  });
}
