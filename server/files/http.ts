/** Streaming a stored file as the answer to a request. */
import type { Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import type { Response } from 'express';

/**
 * Pipes `body` to the response. A store that fails before the first byte leaves the answer to the
 * error handler (503 for StoreUnavailable), without the file's headers; after it, the connection is cut.
 */
export async function sendStream(res: Response, body: Readable): Promise<void> {
  try {
    await pipeline(body, res);
  } catch (err) {
    if (res.headersSent) {
      res.destroy();
      return;
    }
    for (const h of ['Content-Length', 'Content-Disposition', 'Content-Security-Policy', 'Cache-Control']) res.removeHeader(h);
    throw err;
  }
}
