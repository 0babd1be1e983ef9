/**
 * Copies every stored file from one store to another (folder to bucket, or back), checking each
 * copy's SHA-256 by reading it back. Resumable: run it again after a stop and the files already
 * there with the same SHA-256 are skipped; a different or damaged copy is replaced.
 */
import { readAll, sha256Hex, type FileStore } from './store';

export interface CopyReport {
  copied: number;
  skipped: number;
  /** Keys whose copy did not read back with the source's SHA-256 (the bad copy was removed). */
  failed: string[];
  removed: number;
}

const TYPES: Record<string, string> = { jpg: 'image/jpeg', jpeg: 'image/jpeg', png: 'image/png', webp: 'image/webp', csv: 'text/csv' };
const typeOf = (key: string) => TYPES[key.slice(key.lastIndexOf('.') + 1).toLowerCase()];

export async function copyFiles(
  from: FileStore,
  to: FileStore,
  opts: { removeSource?: boolean; log?: (line: string) => void } = {},
): Promise<CopyReport> {
  const log = opts.log ?? (() => {});
  const report: CopyReport = { copied: 0, skipped: 0, failed: [], removed: 0 };
  // Listed first, so files written meanwhile (and the start-up check's probes) are not chased.
  const keys: string[] = [];
  for await (const o of from.list('')) if (!o.key.startsWith('keepwell-check/') && !o.key.startsWith('.keepwell-check')) keys.push(o.key);
  keys.sort();
  for (const [i, key] of keys.entries()) {
    const body = await readAll(from, key);
    const sha256 = sha256Hex(body);
    const there = await to.head(key);
    let same = false;
    if (there && there.size === body.length) same = (there.sha256 ?? sha256Hex(await readAll(to, key))) === sha256;
    if (!same) {
      await to.put(key, body, { sha256, contentType: typeOf(key) });
      if (sha256Hex(await readAll(to, key)) !== sha256) {
        await to.delete(key);
        report.failed.push(key);
        log(`${key}: the copy did not read back with the same SHA-256; removed it`);
        continue;
      }
      report.copied++;
    } else {
      report.skipped++;
    }
    if (opts.removeSource) {
      await from.delete(key);
      report.removed++;
    }
    if ((i + 1) % 100 === 0) log(`${i + 1} of ${keys.length} files`);
  }
  return report;
}
