/**
 * `npm run bench`: runs every bench/*.bench.ts in turn. Each prints its own table of figures
 * (CPU seconds, ratios, peak memory). Targets are checked here, never in unit tests.
 */
import { readdirSync } from 'node:fs';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { dirname, join } from 'node:path';

const here = dirname(fileURLToPath(import.meta.url));
const only = process.argv.slice(2);
const files = readdirSync(here).filter((f) => f.endsWith('.bench.ts')).sort()
  .filter((f) => only.length === 0 || only.some((o) => f.includes(o)));
let failed = 0;
for (const f of files) {
  console.log(`\n=== ${f} ===`);
  const mod = await import(pathToFileURL(join(here, f)).href) as { run: () => Promise<boolean | void> };
  const ok = await mod.run();
  if (ok === false) failed++;
}
console.log(`\nbench: ${files.length} file(s), ${failed} with a missed target`);
process.exitCode = failed ? 1 : 0;
