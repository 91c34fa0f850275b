import { z } from "zod";

/**
 * The learner families a plan can name (DESIGN.md). `logistic` fits ridge regression
 * (`linear`) on regression tasks. The list lives in core because plans and fold jobs
 * name families across process boundaries; package `learners` implements them.
 */
export const FAMILY_NAMES = ["logistic", "tree", "forest", "extra_trees", "boosted", "knn"] as const;
export const FamilyNameSchema = z.enum(FAMILY_NAMES);
export type FamilyName = z.infer<typeof FamilyNameSchema>;
