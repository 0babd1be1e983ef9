/**
 * What the service worker precaches for working offline (issue 18), from a built client (dist/,
 * `npx vite build`): the files named in dist/sw.js, their size as stored and gzip (zlib level 6).
 *
 *   node --import tsx tests/bench/offline-size.ts [dist]
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { gzipSync } from 'node:zlib';

export function offlineSize(dist = fileURLToPath(new URL('../../dist', import.meta.url))) {
  const sw = readFileSync(join(dist, 'sw.js'), 'utf8');
  const urls = [...sw.matchAll(/url:"([^"]+)"/g)].map((m) => m[1]);
  let bytes = 0;
  let gzip = 0;
  const byKind = new Map<string, { n: number; bytes: number }>();
  for (const u of urls) {
    const buf = readFileSync(join(dist, u));
    bytes += buf.length;
    gzip += gzipSync(buf).length;
    const kind = u.split('.').pop() ?? '';
    const k = byKind.get(kind) ?? { n: 0, bytes: 0 };
    byKind.set(kind, { n: k.n + 1, bytes: k.bytes + buf.length });
  }
  return { files: urls.length, bytes, gzip, byKind };
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const s = offlineSize(process.argv[2]);
  for (const [kind, k] of s.byKind) console.log(`${String(k.n).padStart(5)} ${kind.padEnd(6)} ${(k.bytes / 1024).toFixed(1).padStart(8)} kB`);
  console.log(`precached for offline: ${s.files} files, ${(s.bytes / 1024).toFixed(1)} kB as stored, ${(s.gzip / 1024).toFixed(1)} kB gzip`);
}
