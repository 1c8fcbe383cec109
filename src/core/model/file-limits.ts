/** How large a pattern file may be, one rule for the command line, the app's host and the desktop picker. */

/** Largest pattern file read unless the user allows more, MB (a 2 M-line export is about 40 MB). */
export const DEFAULT_MAX_PATTERN_MB = 200;

/** The name of the setting (an environment variable) that raises or lowers the cap, in MB. */
export const MAX_PATTERN_MB_SETTING = 'CRYSTALLOG_MAX_FILE_MB';

/** The cap in bytes: the user's value in MB when it is a positive number, else the default. */
export function maxPatternBytes(userMegabytes: string | undefined): number {
  const mb = userMegabytes === undefined ? Number.NaN : Number(userMegabytes.trim());
  return (Number.isFinite(mb) && mb > 0 ? mb : DEFAULT_MAX_PATTERN_MB) * 1024 * 1024;
}

/** The sentence for a file over the cap. */
export function tooLargeMessage(sizeBytes: number, maxBytes: number): string {
  const mb = (bytes: number): string => (bytes / 1048576).toFixed(0);
  return `the file has ${mb(sizeBytes)} MB, more than the ${mb(maxBytes)} MB a pattern file may have here; check that this is a pattern, or set ${MAX_PATTERN_MB_SETTING} to a larger number of MB`;
}
