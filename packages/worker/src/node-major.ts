import { NODE_MAJOR } from "@nightshift/core";

/**
 * Fold results are promised bit-identical only within one Node.js major version
 * (DESIGN.md contract 1): a job made under another major is refused, never run.
 */
export function otherNodeMajor(jobNode: number): string | null {
  return jobNode === NODE_MAJOR ? null : `job made by Node.js ${jobNode}, this worker runs Node.js ${NODE_MAJOR}: results would not be bit-identical, so it is refused`;
}
