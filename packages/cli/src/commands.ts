import { InputError } from "@nightshift/core";

/** One verb of the `nightshift` command. */
export interface Verb {
  readonly name: string;
  readonly usage: string;
  readonly summary: string;
  run(args: string[]): Promise<number>;
}

const verbs: Verb[] = [];

/** Verbs register here as they are built. */
export function registerVerb(verb: Verb): void {
  verbs.push(verb);
}

export function helpText(): string {
  const lines = verbs.flatMap((v) => [`  nightshift ${v.usage}`, `      ${v.summary}`]);
  return [
    "nightshift: hyperparameter-and-ensemble search for tabular machine learning",
    "",
    ...(lines.length > 0 ? lines : ["  (no verbs yet)"]),
    "",
    "Exit codes: 0 ok, 1 internal failure, 2 bad input (plan, data, arguments).",
  ].join("\n");
}

export async function runCli(argv: string[]): Promise<number> {
  const [name, ...rest] = argv;
  if (name === undefined || name === "--help" || name === "-h" || name === "help") {
    console.log(helpText());
    return 0;
  }
  const verb = verbs.find((v) => v.name === name);
  if (!verb) throw new InputError("arguments", `unknown verb '${name}'; run 'nightshift --help' for the list`);
  return verb.run(rest);
}
