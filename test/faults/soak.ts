/**
 * `npm run soak` runs the fault tests longer: NIGHTSHIFT_SOAK set (to anything but "" or "0") multiplies
 * each test's repetitions by SOAK_FACTOR (NIGHTSHIFT_SOAK_FACTOR, default 4): more seeds for seeded
 * fault moments, more generated inputs for fuzzing, more fault moments, and timeouts that grow with them.
 * Unset, every test runs its ordinary size (factor 1).
 */
const enabled = (process.env.NIGHTSHIFT_SOAK ?? "") !== "" && process.env.NIGHTSHIFT_SOAK !== "0";

function factorFromEnv(): number {
  const text = process.env.NIGHTSHIFT_SOAK_FACTOR;
  if (text === undefined || text === "") return 4;
  const value = Number(text);
  if (!Number.isInteger(value) || value < 1) throw new Error(`NIGHTSHIFT_SOAK_FACTOR must be a whole number of at least 1, not ${JSON.stringify(text)}`);
  return value;
}

export const SOAK = enabled;
export const SOAK_FACTOR = enabled ? factorFromEnv() : 1;

/** `count` times SOAK_FACTOR: how many runs, inputs or fault moments a test makes. */
export function soakCount(count: number): number {
  return count * SOAK_FACTOR;
}

/** The seeds a seeded test runs with: `first` alone, or SOAK_FACTOR consecutive seeds from `first` under soak. */
export function soakSeeds(first: number): number[] {
  return Array.from({ length: SOAK_FACTOR }, (_, i) => first + i);
}

/** A test timeout (ms) for a test whose work grows with SOAK_FACTOR. */
export function soakTimeout(ms: number): number {
  return ms * SOAK_FACTOR;
}

/** fast-check parameters: the same seed (so the ordinary runs are the first ones), SOAK_FACTOR times the runs. */
export function fuzzRuns(seed: number, numRuns: number): { seed: number; numRuns: number } {
  return { seed, numRuns: soakCount(numRuns) };
}
