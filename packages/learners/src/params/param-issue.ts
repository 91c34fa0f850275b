import type { z } from "zod";
import type { FamilyName } from "../learner.js";
import { parseParams } from "../params.js";

/**
 * Validates a family's parameters; a mistake becomes a ParamError naming `family.parameter`
 * and the allowed range (one wording for every family: see params.ts).
 */
export function parseFamilyParams<Params>(family: FamilyName, schema: z.ZodType<Params>, input: unknown): Params {
  return parseParams(family, schema, input);
}
