import { type Constant, createRng, type FamilyName, type Plan, sample } from "@nightshift/core";

/** One sampled configuration of one family. */
export interface Trial {
  readonly trial: number;
  readonly family: FamilyName;
  readonly params: Readonly<Record<string, Constant>>;
}

/**
 * Trial i of a plan (random search, Bergstra & Bengio 2012). Its configuration is a
 * function of (seed, i) and the plan alone: no shared random stream is consumed, so a
 * run can be extended or resumed, or its trials derived on any box, in any order.
 * The family is drawn by the plan's weights, then each parameter in plan order.
 */
export function deriveTrial(plan: Plan, index: number): Trial {
  const rng = createRng(plan.seed, "trial", index);
  const families = Object.entries(plan.families) as Array<[FamilyName, NonNullable<Plan["families"][FamilyName]>]>;
  const total = families.reduce((sum, [, space]) => sum + space.weight, 0);
  let pick = rng.next() * total;
  let chosen = families[families.length - 1];
  for (const entry of families) {
    pick -= entry[1].weight;
    if (pick < 0) {
      chosen = entry;
      break;
    }
  }
  const [family, space] = chosen;
  const params: Record<string, Constant> = {};
  for (const [name, distribution] of Object.entries(space.params)) params[name] = sample(distribution, rng);
  return { trial: index, family, params };
}
