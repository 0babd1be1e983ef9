/** Stored files in a local folder (the default): key `photos/x.jpg` is `<root>/photos/x.jpg`. */
import { randomBytes } from 'node:crypto';
import { createWriteStream } from 'node:fs';
import { access, mkdir, open, readdir, rename, rm, stat, writeFile } from 'node:fs/promises';
import { dirname, join, resolve } from 'node:path';
import type { Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { assertKey, FileMissing, StoreUnavailable, type FileStore, type PutOptions, type StoredObject } from './store';

const MISSING = new Set(['ENOENT', 'ENOTDIR']);

function failure(err: unknown, key: string): Error {
  const code = (err as NodeJS.ErrnoException).code;
  if (code && MISSING.has(code)) return new FileMissing(key);
  return new StoreUnavailable(`The upload folder could not be used (${code ?? (err as Error).message})`, { cause: err });
}

export function folderStore(rootDir: string): FileStore {
  const root = resolve(rootDir);
  const path = (key: string) => {
    assertKey(key);
    return join(root, ...key.split('/'));
  };
  return {
    kind: 'folder',
    description: `folder ${root}`,

    async put(key: string, body: Buffer | Readable, _opts?: PutOptions) {
      const target = path(key);
      const tmp = `${target}.${randomBytes(6).toString('hex')}.tmp`;
      try {
        await mkdir(dirname(target), { recursive: true });
        if (Buffer.isBuffer(body)) await writeFile(tmp, body, { flag: 'wx' });
        else await pipeline(body, createWriteStream(tmp, { flags: 'wx' }));
        await rename(tmp, target);
      } catch (err) {
        await rm(tmp, { force: true }).catch(() => undefined);
        throw failure(err, key);
      }
    },

    async get(key: string) {
      const p = path(key);
      // Open first, so a missing file is FileMissing here and not an error in the middle of a response.
      let fh;
      try {
        fh = await open(p, 'r');
      } catch (err) {
        throw failure(err, key);
      }
      const { size } = await fh.stat();
      return { body: fh.createReadStream(), size };
    },

    async head(key: string): Promise<StoredObject | null> {
      try {
        const s = await stat(path(key));
        return s.isFile() ? { size: s.size } : null;
      } catch (err) {
        const e = failure(err, key);
        if (e instanceof FileMissing) return null;
        throw e;
      }
    },

    async delete(key: string) {
      try {
        await rm(path(key), { force: true });
      } catch (err) {
        throw failure(err, key);
      }
    },

    async *list(prefix: string) {
      const walk = async function* (dir: string, rel: string): AsyncGenerator<{ key: string; size: number }> {
        let entries;
        try {
          entries = await readdir(dir, { withFileTypes: true });
        } catch (err) {
          if (MISSING.has((err as NodeJS.ErrnoException).code ?? '')) return;
          throw failure(err, rel);
        }
        for (const e of entries) {
          const key = rel ? `${rel}/${e.name}` : e.name;
          if (e.isDirectory()) yield* walk(join(dir, e.name), key);
          else if (e.isFile() && !e.name.endsWith('.tmp') && key.startsWith(prefix)) yield { key, size: (await stat(join(dir, e.name))).size };
        }
      };
      yield* walk(root, '');
    },

    async check() {
      const probe = join(root, `.keepwell-check-${randomBytes(6).toString('hex')}`);
      try {
        await mkdir(root, { recursive: true });
        await writeFile(probe, 'ok');
        await access(probe);
      } catch (err) {
        throw new Error(`The upload folder ${root} cannot be written (${(err as NodeJS.ErrnoException).code ?? (err as Error).message}): give the app's user write permission on it, or set DATA_DIR`);
      } finally {
        await rm(probe, { force: true }).catch(() => undefined);
      }
    },
  };
}
