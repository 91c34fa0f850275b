import { z } from "zod";
import { TaskSchema } from "../task.js";
import { type Distribution, parseDistribution } from "./distributions.js";
import { FAMILY_NAMES, type FamilyName } from "./families.js";

/** A search space of one family: its parameters' distributions and its sampling weight. */
export interface FamilySpace {
  readonly weight: number;
  readonly params: Readonly<Record<string, Distribution>>;
}

const FamilySpaceSchema = z
  .record(z.string(), z.unknown())
  .nullable()
  .transform((raw, ctx): FamilySpace => {
    const params: Record<string, Distribution> = {};
    let weight = 1;
    for (const [key, value] of Object.entries(raw ?? {})) {
      if (key === "weight") {
        if (typeof value !== "number" || !(value > 0) || !Number.isFinite(value))
          ctx.addIssue({ code: "custom", path: [key], message: `must be a positive number (got ${JSON.stringify(value)})` });
        else weight = value;
        continue;
      }
      const parsed = parseDistribution(value);
      if (typeof parsed === "string") ctx.addIssue({ code: "custom", path: [key], message: parsed });
      else params[key] = parsed;
    }
    return { weight, params };
  });

const positiveInt = z.number().int().positive();

export const PlanSchema = z.strictObject({
  name: z
    .string()
    .regex(/^[A-Za-z0-9][A-Za-z0-9_.-]{0,63}$/, "must be 1-64 letters, digits, '-', '_' or '.', starting with a letter or digit"),
  seed: z.number().int().nonnegative().default(0),
  data: z.strictObject({
    train: z.string().min(1),
    target: z.string().min(1),
    ignore: z.array(z.string()).default([]),
    categorical: z.array(z.string()).default([]),
    holdout: z.number().min(0).max(0.9).default(0.2),
  }),
  task: TaskSchema.optional(),
  metric: z.string().optional(),
  folds: z
    .strictObject({
      k: z.number().int().min(2).max(100).default(5),
      repeats: positiveInt.max(100).default(1),
      stratify: z.boolean().default(true),
      group: z.string().optional(),
    })
    .default({ k: 5, repeats: 1, stratify: true }),
  budget: z.strictObject({
    trials: positiveInt.max(1_000_000),
    hours: z.number().positive().optional(),
    trial_minutes: z.number().positive().optional(),
  }),
  halving: z
    .strictObject({
      eta: z.number().int().min(2).max(10).default(3),
      batch: positiveInt.optional(),
    })
    .optional(),
  families: z
    .record(z.string(), FamilySpaceSchema)
    .superRefine((families, ctx) => {
      for (const name of Object.keys(families))
        if (!(FAMILY_NAMES as readonly string[]).includes(name))
          ctx.addIssue({ code: "custom", path: [name], message: `unknown family; use one of ${FAMILY_NAMES.join(", ")}` });
      if (Object.keys(families).length === 0) ctx.addIssue({ code: "custom", path: [], message: "name at least one family" });
    })
    .transform((families) => families as Partial<Record<FamilyName, FamilySpace>>),
  ensemble: z
    .strictObject({
      selection: z
        .strictObject({
          rounds: positiveInt.max(10_000).default(50),
          candidates: positiveInt.max(10_000).default(50),
          init: z.number().int().nonnegative().default(0),
        })
        .default({ rounds: 50, candidates: 50, init: 0 }),
      stacking: z.strictObject({ top: positiveInt.max(1000).default(20), non_negative: z.boolean().default(false) }).default({ top: 20, non_negative: false }),
      voting: z.strictObject({ top: positiveInt.max(1000).default(10) }).default({ top: 10 }),
    })
    .default({
      selection: { rounds: 50, candidates: 50, init: 0 },
      stacking: { top: 20, non_negative: false },
      voting: { top: 10 },
    }),
});

/** A validated plan, with defaults filled in. */
export type Plan = z.infer<typeof PlanSchema>;

/** One line per problem: `key.path: message`. */
export function formatIssues(error: z.ZodError): string[] {
  return error.issues.map((issue) => {
    const path = issue.path.map(String).join(".");
    if (issue.code === "unrecognized_keys") {
      const keys = (issue as { keys: string[] }).keys;
      return keys.map((k) => `${path ? `${path}.` : ""}${k}: unknown key`).join("; ");
    }
    return `${path || "(plan)"}: ${issue.message}`;
  });
}
