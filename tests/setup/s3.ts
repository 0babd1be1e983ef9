/**
 * Vitest global setup for the S3 path: s3rver (a fake S3 server from npm) on 127.0.0.1, on a free
 * port, with its own temp folder. Each test file makes its own bucket in it (tests/helpers/app.ts).
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import S3rver from 's3rver';
import type { TestProject } from 'vitest/node';

export interface TestS3 {
  endpoint: string;
  accessKeyId: string;
  secretAccessKey: string;
}

declare module 'vitest' {
  export interface ProvidedContext {
    s3: TestS3;
  }
}

/** s3rver's fixed credentials (it checks request signatures against them). */
export const S3RVER_CREDENTIALS = { accessKeyId: 'S3RVER', secretAccessKey: 'S3RVER' };

export async function startS3rver(): Promise<{ endpoint: string; stop(): Promise<void> }> {
  const dir = mkdtempSync(join(tmpdir(), 'keepwell-s3rver-'));
  const server = new S3rver({ address: '127.0.0.1', port: 0, silent: true, directory: dir });
  const addr = (await server.run()) as { port: number };
  // Node's 5 s keep-alive would close idle sockets the SDK may be reusing at that moment: an upload
  // (a stream, which the SDK does not retry) once failed with "socket hang up" under CI load. Object
  // stores keep idle connections longer; so does this one.
  const http = (server as unknown as { httpServer: import('node:http').Server }).httpServer;
  http.keepAliveTimeout = 65_000;
  http.headersTimeout = 66_000;
  return {
    endpoint: `http://127.0.0.1:${addr.port}`,
    async stop() {
      await server.close();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

export default async function setup(project: TestProject) {
  // The SDK's one-time note that its 2027 releases need Node 22: not news in every test run.
  process.env.AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED ??= 'true';
  const s3 = await startS3rver();
  project.provide('s3', { endpoint: s3.endpoint, ...S3RVER_CREDENTIALS });
  return () => s3.stop();
}
