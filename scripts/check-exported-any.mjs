// Fails when a package's emitted declarations (its exported signatures) contain `any`.
import { readdirSync, readFileSync, statSync } from "node:fs";
import { join } from "node:path";

const root = new URL("../packages/", import.meta.url).pathname;
const offenders = [];
function walk(dir) {
  for (const name of readdirSync(dir)) {
    const path = join(dir, name);
    if (statSync(path).isDirectory()) walk(path);
    else if (name.endsWith(".d.ts")) {
      readFileSync(path, "utf8").split("\n").forEach((line, i) => {
        const code = line.trim().startsWith("*") || line.trim().startsWith("/*") ? "" : line;
        if (/\bany\b/.test(code.replace(/\/\/.*$|\/\*.*?\*\//g, "").replace(/"[^"]*"|'[^']*'/g, "")))
          offenders.push(`${path}:${i + 1}: ${line.trim()}`);
      });
    }
  }
}
for (const pkg of readdirSync(root)) {
  try { walk(join(root, pkg, "dist")); } catch { /* package not built */ }
}
if (offenders.length > 0) {
  console.error(`exported signatures use \`any\`:\n${offenders.join("\n")}`);
  process.exit(1);
}
console.log("lint: no `any` in exported signatures");
