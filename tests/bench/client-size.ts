/**
 * The initial JavaScript of the Bench page: what the browser loads before the Bench shows, from a
 * built client (dist/, from `npx vite build`): the entry script of index.html, the lazy chunks of the
 * route (AppShell, then BenchView), and every chunk those import statically, each counted once.
 * Dynamic imports (other pages, charts) are not counted. Sizes gzip at zlib's default level (6), as Vite reports them and a server sends them.
 *
 *   node --import tsx tests/bench/client-size.ts [dist]     (a full `npm run bench` builds the client and lists this figure among its goals)
 */
import { existsSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { gzipSync } from 'node:zlib';

/** The goal of issue 14: the Bench's initial JavaScript at or under 170 kB gzip. */
export const BENCH_INITIAL_JS_GOAL_KB = 170;
/** The lazy route chunks loaded on the way to /bench (src/router/index.ts). */
const ROUTE_CHUNKS = ['AppShell', 'BenchView'];

export interface ClientSize {
  files: { file: string; bytes: number; gzip: number }[];
  bytes: number;
  gzip: number;
  /** When index.html was written (the build measured). */
  builtAt: Date;
}

/** Static imports of one built chunk: `import ... from "./x.js"`, `import "./x.js"`, `export ... from "./x.js"`. */
function staticImports(code: string): string[] {
  const out: string[] = [];
  const re = /(?:^|[;}\n])\s*(?:import|export)\s*(?:[\w$*{},\s]*?\s*from\s*)?["']\.\/([^"']+\.js)["']/g;
  for (let m = re.exec(code); m; m = re.exec(code)) out.push(m[1]);
  return out;
}

export function benchInitialJs(dist = fileURLToPath(new URL('../../dist', import.meta.url))): ClientSize {
  const html = join(dist, 'index.html');
  if (!existsSync(html)) throw new Error(`No built client in ${dist}: run \`npx vite build\` first`);
  const assets = join(dist, 'assets');
  const entry = /<script[^>]+type="module"[^>]+src="\/assets\/([^"]+\.js)"/.exec(readFileSync(html, 'utf8'))?.[1];
  if (!entry) throw new Error('index.html names no module entry script');
  const names = readdirSync(assets);
  const roots = [entry];
  for (const chunk of ROUTE_CHUNKS) {
    const found = names.filter((n) => n.startsWith(`${chunk}-`) && n.endsWith('.js'));
    if (found.length !== 1) throw new Error(`Expected one ${chunk}-*.js chunk in ${assets}, found ${found.length}`);
    roots.push(found[0]);
  }
  const seen = new Set<string>();
  const queue = [...roots];
  const files: ClientSize['files'] = [];
  while (queue.length) {
    const f = queue.shift()!;
    if (seen.has(f)) continue;
    seen.add(f);
    const buf = readFileSync(join(assets, f));
    files.push({ file: f, bytes: buf.length, gzip: gzipSync(buf).length });
    queue.push(...staticImports(buf.toString('utf8')));
  }
  return {
    files,
    bytes: files.reduce((s, x) => s + x.bytes, 0),
    gzip: files.reduce((s, x) => s + x.gzip, 0),
    builtAt: statSync(html).mtime,
  };
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const r = benchInitialJs(process.argv[2]);
  for (const f of [...r.files].sort((a, b) => b.gzip - a.gzip)) console.log(`${(f.gzip / 1000).toFixed(1).padStart(8)} kB gzip  ${(f.bytes / 1000).toFixed(1).padStart(8)} kB  ${f.file}`);
  console.log(`${(r.gzip / 1000).toFixed(1).padStart(8)} kB gzip  ${(r.bytes / 1000).toFixed(1).padStart(8)} kB  initial JavaScript of the Bench (${r.files.length} files; built ${r.builtAt.toISOString()}); goal <= ${BENCH_INITIAL_JS_GOAL_KB} kB`);
}
