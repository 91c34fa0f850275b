import { parseArgs, type ParseArgsConfig } from "node:util";

import { InputError } from "@nightshift/core";

type Options = NonNullable<ParseArgsConfig["options"]>;

/** Parses a verb's arguments; a mistake is an InputError (exit 2) that names the verb. */
export function parseVerbArgs<O extends Options>(
  verb: string,
  args: string[],
  options: O,
  positionals: { min: number; max: number; names: string },
): { values: ReturnType<typeof parseArgs<{ options: O; allowPositionals: true; strict: true }>>["values"]; positionals: string[] } {
  let parsed;
  try {
    parsed = parseArgs({ args, options, allowPositionals: true, strict: true });
  } catch (error) {
    throw new InputError(`nightshift ${verb}`, (error as Error).message.replace(/\. To specify a positional.*$/s, ""));
  }
  const count = parsed.positionals.length;
  if (count < positionals.min || count > positionals.max) throw new InputError(`nightshift ${verb}`, `expected ${positionals.names}`);
  return parsed;
}

export function positiveInteger(verb: string, flag: string, value: string | undefined): number | undefined {
  if (value === undefined) return undefined;
  const n = Number(value);
  if (!Number.isInteger(n) || n < 1) throw new InputError(`nightshift ${verb} --${flag}`, `must be a positive integer (got '${value}')`);
  return n;
}
