import type { ErrorResponse } from "./schemas.js";

const STATUS: Record<ErrorResponse["error"], number> = {
  bad_request: 400,
  unauthorized: 401,
  not_found: 404,
  too_large: 414,
  unavailable: 503,
  internal: 500,
};

/** A request the server answers with a JSON error instead of a result. */
export class HttpError extends Error {
  readonly kind: ErrorResponse["error"];

  constructor(kind: ErrorResponse["error"], message: string) {
    super(message);
    this.name = "HttpError";
    this.kind = kind;
  }

  get status(): number {
    return STATUS[this.kind];
  }
}
