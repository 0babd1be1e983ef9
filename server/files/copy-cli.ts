/**
 * `npm run storage:copy -- --to s3` copies DATA_DIR/uploads into the bucket of the S3_* settings;
 * `--to folder` copies the bucket back into DATA_DIR/uploads. Each copy is read back and its SHA-256
 * compared; run it again after a stop to resume. `--remove-source` deletes each source file once its
 * copy is verified (a move). The app may keep running: switch its settings after the copy, then run
 * the copy once more to pick up files uploaded in between.
 */
import { join } from 'node:path';
import { loadConfig } from '../config';
import { copyFiles } from './copy';
import { folderStore } from './folder';
import { s3Store } from './s3';

const args = process.argv.slice(2);
const to = args[args.indexOf('--to') + 1];
if (!args.includes('--to') || (to !== 's3' && to !== 'folder')) {
  console.error('Usage: npm run storage:copy -- --to s3|folder [--remove-source]\n  (folder: DATA_DIR/uploads; bucket: S3_BUCKET, S3_ENDPOINT, S3_REGION, S3_FORCE_PATH_STYLE)');
  process.exit(2);
}
const config = loadConfig();
if (!config.S3_BUCKET) {
  console.error('Set S3_BUCKET (and S3_ENDPOINT, S3_REGION, S3_FORCE_PATH_STYLE as the app uses them) to name the bucket.');
  process.exit(2);
}
const folder = folderStore(join(config.DATA_DIR, 'uploads'));
const bucket = s3Store({ bucket: config.S3_BUCKET, endpoint: config.S3_ENDPOINT, region: config.S3_REGION, forcePathStyle: config.S3_FORCE_PATH_STYLE === 'true' });
const [from, into] = to === 's3' ? [folder, bucket] : [bucket, folder];
try {
  await into.check();
  console.log(`Copying from ${from.description} to ${into.description} ...`);
  const r = await copyFiles(from, into, { removeSource: args.includes('--remove-source'), log: (l) => console.log(l) });
  console.log(`${r.copied} copied, ${r.skipped} already there with the same SHA-256, ${r.failed.length} failed${r.removed ? `, ${r.removed} removed from the source` : ''}.`);
  for (const k of r.failed) console.log(`  failed: ${k}`);
  process.exitCode = r.failed.length ? 1 : 0;
} catch (err) {
  console.error((err as Error).message);
  process.exitCode = 1;
} finally {
  bucket.close?.();
}
