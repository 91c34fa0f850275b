/**
 * A mistake in what the user gave us (file, plan, arguments). The CLI prints
 * `message` alone (no stack) and exits with code 2. `where` names the file and
 * line/column, or the key path, so the user can find the mistake.
 */
export class InputError extends Error {
  readonly where: string;
  constructor(where: string, message: string) {
    super(`${where}: ${message}`);
    this.name = "InputError";
    this.where = where;
  }
}

export function isInputError(error: unknown): error is InputError {
  return error instanceof InputError;
}
