import type { z } from "zod";
import type { FamilyName } from "./learner.js";

/**
 * An invalid hyperparameter value. The message names the family, the parameter and the allowed
 * range, e.g. `forest.depth: must be an integer >= 1 or null (got 0)`, so a plan author can find
 * the mistake without reading a stack trace.
 */
export class ParamError extends RangeError {
  readonly family: FamilyName;
  /** `family.key` of each invalid parameter, in the order of the messages. */
  readonly paths: readonly string[];
  constructor(family: FamilyName, paths: readonly string[], messages: readonly string[]) {
    super(messages.join("; "));
    this.name = "ParamError";
    this.family = family;
    this.paths = paths;
  }
}

/** Validates raw parameters against a family's schema and fills defaults; throws ParamError. */
export function parseParams<T>(family: FamilyName, schema: z.ZodType<T>, raw: unknown): T {
  const parsed = schema.safeParse(raw ?? {});
  if (parsed.success) return parsed.data;
  const paths: string[] = [];
  const messages: string[] = [];
  for (const issue of parsed.error.issues) {
    if (issue.code === "unrecognized_keys") {
      for (const key of issue.keys) {
        const path = joinPath(family, [...issue.path, key]);
        paths.push(path);
        messages.push(`${path}: unknown parameter (allowed: ${allowedKeys(schema).join(", ")})`);
      }
      continue;
    }
    const path = joinPath(family, issue.path);
    paths.push(path);
    messages.push(`${path}: ${describeIssue(issue, valueAt(raw, issue.path))}`);
  }
  throw new ParamError(family, paths, messages);
}

/**
 * What is wrong and what was given. A family's schema may carry its own wording (e.g. "must be
 * an integer in 1..5000"); zod's built-in wording ("Too small: expected ...") is rephrased as
 * the allowed range.
 */
function describeIssue(issue: z.core.$ZodIssue, value: unknown): string {
  const got = `(got ${describe(value)})`;
  const builtIn = /^(Too small|Too big|Invalid)/.test(issue.message);
  let text = issue.message;
  if (builtIn) {
    switch (issue.code) {
      case "too_small":
        text = `must be ${issue.inclusive ? ">=" : ">"} ${String(issue.minimum)}`;
        break;
      case "too_big":
        text = `must be ${issue.inclusive ? "<=" : "<"} ${String(issue.maximum)}`;
        break;
      case "invalid_value":
        text = `must be one of ${issue.values.map((v) => describe(v)).join(", ")}`;
        break;
      case "invalid_type":
        text = `must be ${issue.expected === "int" ? "an integer" : `a ${issue.expected}`}`;
        break;
    }
  }
  return text.includes("(got ") ? text : `${text} ${got}`;
}

function joinPath(family: FamilyName, path: ReadonlyArray<PropertyKey>): string {
  return [family, ...path.map(String)].join(".");
}

function valueAt(raw: unknown, path: ReadonlyArray<PropertyKey>): unknown {
  let value = raw;
  for (const key of path) {
    if (value === null || typeof value !== "object") return undefined;
    value = (value as Record<PropertyKey, unknown>)[key];
  }
  return value;
}

function describe(value: unknown): string {
  if (value === undefined) return "nothing";
  if (typeof value === "number" && !Number.isFinite(value)) return String(value);
  return JSON.stringify(value) ?? String(value);
}

function allowedKeys(schema: z.ZodType): string[] {
  const shape = (schema as { shape?: Record<string, unknown> }).shape;
  return shape ? Object.keys(shape) : [];
}
