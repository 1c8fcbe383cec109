/** What a chemist's file names usually say about a sample: its workup variant and exposure time. */

const VARIANT_WORDS = ['as made', 'as-made', 'ground', 'washed', 'sonicated', 'annealed', 'stirred', 'powdered', 'dried'];

/** A workup variant named in the file name ("batch3_washed.xy" → "washed"), else null. */
export function guessVariant(fileName: string): string | null {
  const lower = fileName.toLowerCase().replace(/[_.]/g, ' ');
  const word = VARIANT_WORDS.find((w) => lower.includes(w));
  return word ? word.replace('-', ' ') : null;
}

/**
 * A temperature named in the file name ("annealed_150C.xy", "dried 80 °C.csv", "anneal-200degC.xy" → °C),
 * else null. A lower-case "c" alone is not taken (too many names end in one).
 */
export function guessTemperature(fileName: string): number | null {
  const match = /(?:^|[^a-z0-9.])(-?\d+(?:\.\d+)?)\s*(?:°\s*[cC]|[dD][eE][gG]\s*[cC]|C)(?![a-zA-Z0-9])/.exec(fileName.replace(/_/g, ' '));
  return match ? Number(match[1]) : null;
}

/** An exposure time named in the file name ("air_24h.xy" → 24), else null. */
export function guessHours(fileName: string): number | null {
  const match = /(?:^|[^a-z0-9.])(\d+(?:\.\d+)?)\s*h(?:ours?)?(?![a-z])/i.exec(fileName.replace(/_/g, ' '));
  return match ? Number(match[1]) : null;
}
