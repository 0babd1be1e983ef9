/** The file store named by the settings: S3_BUCKET set means a bucket, otherwise DATA_DIR/uploads. */
import { join } from 'node:path';
import type { Config } from '../config';
import { folderStore } from './folder';
import { s3Store } from './s3';
import type { FileStore } from './store';

export * from './store';
export { folderStore } from './folder';
export { s3Store, type S3Settings } from './s3';
export { sendStream } from './http';

export function fileStoreFromConfig(config: Config): FileStore {
  if (config.S3_BUCKET) {
    return s3Store({
      bucket: config.S3_BUCKET,
      endpoint: config.S3_ENDPOINT,
      region: config.S3_REGION,
      forcePathStyle: config.S3_FORCE_PATH_STYLE === 'true',
    });
  }
  return folderStore(join(config.DATA_DIR, 'uploads'));
}

/** The configured store, checked: a bucket the app cannot write, read and delete in stops the start. */
export async function openFileStore(config: Config): Promise<FileStore> {
  const store = fileStoreFromConfig(config);
  await store.check();
  return store;
}
