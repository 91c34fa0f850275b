import { InputError } from "@nightshift/core";
import type { z } from "zod";
import type { FamilyName } from "../learner.js";

/**
 * One line for a parameter a plan got wrong, naming the family, the parameter and the allowed
 * range, e.g. `logistic.l2: must be >= 0 (got -1)`. `input` is the object that was validated,
 * so the offending value can be quoted.
 */
export function formatParamIssue(family: FamilyName, issue: z.core.$ZodIssue, input: unknown): string {
  const key = issue.path.map(String).join(".");
  const where = key === "" ? family : `${family}.${key}`;
  return `${where}: ${describeIssue(issue, valueAt(input, issue.path))}`;
}

function describeIssue(issue: z.core.$ZodIssue, value: unknown): string {
  const got = `(got ${quote(value)})`;
  switch (issue.code) {
    case "too_small":
      return `must be ${issue.inclusive ? ">=" : ">"} ${String(issue.minimum)} ${got}`;
    case "too_big":
      return `must be ${issue.inclusive ? "<=" : "<"} ${String(issue.maximum)} ${got}`;
    case "invalid_value":
      return `must be one of ${issue.values.map(quote).join(", ")} ${got}`;
    case "invalid_type":
      return `must be ${issue.expected === "int" ? "an integer" : `a ${issue.expected}`} ${got}`;
    case "unrecognized_keys":
      return `unknown parameter${issue.keys.length > 1 ? "s" : ""} ${issue.keys.map(quote).join(", ")}`;
    default:
      return `${issue.message} ${got}`;
  }
}

function valueAt(input: unknown, path: readonly PropertyKey[]): unknown {
  let value = input;
  for (const key of path) {
    if (value === null || typeof value !== "object") return undefined;
    value = (value as Record<PropertyKey, unknown>)[key];
  }
  return value;
}

function quote(value: unknown): string {
  if (value === undefined) return "nothing";
  return typeof value === "string" ? JSON.stringify(value) : String(value);
}

/** Validates a family's parameters; a mistake becomes an InputError naming `family.parameter`. */
export function parseFamilyParams<Params>(family: FamilyName, schema: z.ZodType<Params>, input: unknown): Params {
  const result = schema.safeParse(input ?? {});
  if (result.success) return result.data;
  const issue = result.error.issues[0];
  const message = formatParamIssue(family, issue, input);
  const separator = message.indexOf(": ");
  throw new InputError(message.slice(0, separator), message.slice(separator + 2));
}
