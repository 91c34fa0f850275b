import { createHash, timingSafeEqual } from "node:crypto";

/** The environment variable read for the token when `--token` is not given. */
export const TOKEN_ENV = "NIGHTSHIFT_TOKEN";
/** The cookie a browser keeps after opening the dashboard once with `?token=`. */
export const TOKEN_COOKIE = "nightshift_token";
/** Shortest token accepted for a server reachable from other machines. */
export const MIN_TOKEN_LENGTH = 16;

const LOOPBACK = new Set(["127.0.0.1", "::1", "localhost"]);

export function isLoopback(host: string): boolean {
  return LOOPBACK.has(host) || /^127\.\d{1,3}\.\d{1,3}\.\d{1,3}$/.test(host);
}

/**
 * Why a host/token pair may not be served, or null when it may: anything but loopback
 * needs a token, and a token long enough not to be guessed.
 */
export function accessProblem(host: string, token: string | undefined): string | null {
  if (token !== undefined && token.length < MIN_TOKEN_LENGTH) return `the token must be at least ${MIN_TOKEN_LENGTH} characters`;
  if (!isLoopback(host) && token === undefined) return `serving on ${host} makes the runs readable from other machines; give --token (or set ${TOKEN_ENV})`;
  return null;
}

function digest(text: string): Buffer {
  return createHash("sha256").update(text, "utf8").digest();
}

/**
 * Compares a presented token with the expected one in time that does not depend on where they
 * differ: both are hashed to 32 bytes first, so their lengths leak nothing either.
 */
export function tokenMatches(expected: string, presented: string | undefined): boolean {
  if (presented === undefined) return false;
  return timingSafeEqual(digest(expected), digest(presented));
}

/** The token a request presents: `Authorization: Bearer`, the `token` query parameter, or the dashboard's cookie. */
export function presentedToken(headers: { authorization?: string; cookie?: string }, query: unknown): string | undefined {
  const auth = headers.authorization;
  if (auth !== undefined) {
    const match = /^Bearer\s+(\S+)\s*$/i.exec(auth);
    return match ? match[1] : undefined;
  }
  if (query !== null && typeof query === "object" && typeof (query as { token?: unknown }).token === "string") return (query as { token: string }).token;
  for (const part of (headers.cookie ?? "").split(";")) {
    const [name, ...value] = part.trim().split("=");
    if (name === TOKEN_COOKIE) {
      try {
        return decodeURIComponent(value.join("="));
      } catch {
        return undefined;
      }
    }
  }
  return undefined;
}
