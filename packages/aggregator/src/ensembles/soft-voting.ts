/**
 * Soft voting of the top K candidates: the plain mean of their probabilities (or values), the
 * baseline the fitted ensembles must beat. Returns the equal weights, 1/K each.
 */
export function softVotingWeights(members: number): Float64Array {
  if (!Number.isInteger(members) || members < 1) throw new RangeError(`soft voting needs at least one member, got ${members}`);
  return new Float64Array(members).fill(1 / members);
}
