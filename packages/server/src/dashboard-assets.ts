import { existsSync, readdirSync, readFileSync } from "node:fs";
import { createRequire } from "node:module";
import { dirname, extname, join } from "node:path";
import { fileURLToPath } from "node:url";

/** packages/server: this file sits one level down, in src/ or in dist/. */
export const PACKAGE_ROOT = fileURLToPath(new URL("..", import.meta.url));

const TYPES: Record<string, string> = {
  ".html": "text/html; charset=utf-8",
  ".css": "text/css; charset=utf-8",
  ".js": "text/javascript; charset=utf-8",
  ".svg": "image/svg+xml",
};

export interface Asset {
  readonly body: Buffer;
  readonly type: string;
}

function load(path: string): Asset {
  return { body: readFileSync(path), type: TYPES[extname(path)] ?? "application/octet-stream" };
}

function filesIn(folder: string, extensions: readonly string[]): Map<string, string> {
  const out = new Map<string, string>();
  if (!existsSync(folder)) return out;
  for (const name of readdirSync(folder)) if (extensions.includes(extname(name))) out.set(name, join(folder, name));
  return out;
}

/**
 * The files the dashboard is made of, as a fixed table from URL name to file read at start:
 * the page and its style (static/), its scripts as compiled by the package build
 * (dist/web/), and the browser builds of the chart library from node_modules. Nothing else
 * on disk can be asked for, and nothing is fetched from another host.
 */
export class DashboardAssets {
  private readonly assets = new Map<string, string>();
  private readonly vendor = new Map<string, string>();
  private readonly cache = new Map<string, Asset>();

  constructor(root: string = PACKAGE_ROOT) {
    for (const [name, path] of filesIn(join(root, "static"), [".css", ".svg"])) this.assets.set(name, path);
    for (const [name, path] of filesIn(join(root, "dist", "web"), [".js"])) this.assets.set(name, path);
    const require = createRequire(join(root, "package.json"));
    // Each package's main entry sits in its build folder beside the browser bundle.
    for (const [pkg, bundle] of [
      ["vega", "vega.min.js"],
      ["vega-lite", "vega-lite.min.js"],
      ["vega-embed", "vega-embed.min.js"],
    ] as const) {
      this.vendor.set(bundle, join(dirname(require.resolve(pkg)), bundle));
    }
    this.assets.set("index.html", join(root, "static", "index.html"));
  }

  private read(key: string, path: string | undefined): Asset | null {
    if (path === undefined) return null;
    const hit = this.cache.get(key);
    if (hit) return hit;
    const asset = load(path);
    this.cache.set(key, asset);
    return asset;
  }

  page(): Asset | null {
    return this.read("asset:index.html", this.assets.get("index.html"));
  }

  asset(name: string): Asset | null {
    return name === "index.html" ? null : this.read(`asset:${name}`, this.assets.get(name));
  }

  vendorBundle(name: string): Asset | null {
    return this.read(`vendor:${name}`, this.vendor.get(name));
  }
}
