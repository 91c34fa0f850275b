import { readFileSync } from "node:fs";
import { isMap, isScalar, LineCounter, parseDocument, visit, type Node } from "yaml";
import { InputError } from "../errors.js";
import { type Plan, PlanSchema } from "./plan-schema.js";

/**
 * Reads and validates a plan file. A problem is reported as one InputError naming
 * the file, the line and column of the offending key, and the key path.
 */
export function readPlan(path: string): Plan {
  let text: string;
  try {
    text = readFileSync(path, "utf8");
  } catch (error) {
    throw new InputError(path, `cannot read plan (${(error as NodeJS.ErrnoException).code ?? String(error)})`);
  }
  return parsePlan(text, path);
}

export function parsePlan(text: string, source: string): Plan {
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, { lineCounter, uniqueKeys: true, prettyErrors: false });
  if (doc.errors.length > 0) {
    const error = doc.errors[0];
    const { line, col } = lineCounter.linePos(error.pos[0]);
    throw new InputError(`${source}:${line}:${col}`, `not valid YAML: ${error.message.split("\n")[0]}`);
  }
  const badKey = firstBadKey(doc.contents);
  if (badKey !== null) {
    const { line, col } = lineCounter.linePos(badKey.position);
    throw new InputError(`${source}:${line}:${col}`, badKey.message);
  }
  let raw: unknown;
  try {
    raw = doc.toJS();
  } catch (error) {
    // The yaml library refuses documents whose aliases expand too far (a resource exhaustion guard).
    throw new InputError(source, `not a usable plan: ${(error as Error).message}`);
  }
  if (raw === null || typeof raw !== "object" || Array.isArray(raw)) throw new InputError(source, "a plan must be a mapping of keys (name, data, budget, families ...)");
  const result = PlanSchema.safeParse(raw);
  if (result.success) return result.data;
  const issue = result.error.issues[0];
  let path = issue.path.map(String);
  let message = issue.message;
  if (issue.code === "unrecognized_keys") {
    path = [...path, issue.keys[0]];
    message = `unknown key '${issue.keys[0]}'`;
  }
  const where = locate(doc.contents, path, lineCounter);
  const more = result.error.issues.length > 1 ? ` (and ${result.error.issues.length - 1} more problem(s))` : "";
  throw new InputError(`${source}${where}`, `${path.join(".") || "(plan)"}: ${message}${more}`);
}

/** `:line:col` of the deepest node on `path` that exists in the document. */
function locate(root: unknown, path: string[], lineCounter: LineCounter): string {
  let node = root as Node | null | undefined;
  let position: number | undefined = (node as { range?: [number] } | undefined)?.range?.[0];
  for (const key of path) {
    if (!isMap(node)) break;
    const pair = node.items.find((item) => isScalar(item.key) && String(item.key.value) === key);
    if (!pair) break;
    position = (pair.key as Node).range?.[0];
    node = pair.value as Node | null;
  }
  if (position === undefined) return "";
  const { line, col } = lineCounter.linePos(position);
  return `:${line}:${col}`;
}

/**
 * The first mapping key that cannot name a plan setting: not a plain scalar (a list or mapping
 * as key would be stringified), empty, or `__proto__` (which a JavaScript object would take as
 * its prototype and so silently drop).
 */
function firstBadKey(root: unknown): { position: number; message: string } | null {
  let found: { position: number; message: string } | null = null;
  if (root === null || root === undefined) return null;
  visit(root as Node, {
    Pair(_, pair) {
      const key = pair.key as Node | null;
      const position = key?.range?.[0] ?? (pair.value as Node | null)?.range?.[0] ?? 0;
      if (!isScalar(key)) found = { position, message: "a key must be a plain name, not a list, mapping or nothing" };
      else if (key.value === null || String(key.value) === "") found = { position, message: "a key must not be empty" };
      else if (String(key.value) === "__proto__") found = { position, message: "'__proto__' cannot be a key" };
      return found === null ? undefined : visit.BREAK;
    },
  });
  return found;
}
