import { createHash } from "node:crypto";
import { join } from "node:path";

/**
 * A run's id names the plan and a short hash of the frozen plan and the dataset's
 * fingerprint: the same plan on the same data finds the same run folder, so running it
 * again resumes it.
 */
export function runIdOf(planName: string, frozenPlan: string, datasetFingerprint: string): string {
  const hash = createHash("sha256").update(frozenPlan).update("\0").update(datasetFingerprint).digest("hex");
  return `${planName}-${hash.slice(0, 8)}`;
}

export function defaultRunFolder(runsDir: string, runId: string): string {
  return join(runsDir, runId);
}

/** A canonical JSON text of a value (sorted keys), so equal plans hash equally. */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(value, (_key, v: unknown) => {
    if (v && typeof v === "object" && !Array.isArray(v)) {
      return Object.fromEntries(Object.entries(v as Record<string, unknown>).sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0)));
    }
    return v;
  });
}
