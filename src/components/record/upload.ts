/**
 * Multipart uploads with progress (fetch cannot report upload progress): XMLHttpRequest with
 * the CSRF header every change carries. Answers like the API client: the JSON body, or an
 * ApiError with the server's message and fields.
 */
import { ApiError } from '@/api/client';

export interface UploadProgress {
  loaded: number;
  total: number;
  /** 0–100 */
  percent: number;
}

export function uploadWithProgress<T>(path: string, form: FormData, onProgress?: (p: UploadProgress) => void): { promise: Promise<T>; abort: () => void } {
  const xhr = new XMLHttpRequest();
  const promise = new Promise<T>((resolve, reject) => {
    xhr.open('POST', `/api${path}`);
    xhr.setRequestHeader('X-Keepwell-Request', '1');
    xhr.setRequestHeader('Accept', 'application/json');
    xhr.withCredentials = true;
    xhr.responseType = 'text';
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable) onProgress?.({ loaded: e.loaded, total: e.total, percent: Math.round((e.loaded / e.total) * 100) });
    };
    xhr.onerror = () => reject(new ApiError(0, 'network', 'Cannot reach the server. Check the connection and try again.'));
    xhr.onabort = () => reject(new ApiError(0, 'aborted', 'Upload cancelled'));
    xhr.onload = () => {
      let body: unknown = null;
      try {
        body = xhr.responseText ? JSON.parse(xhr.responseText) : null;
      } catch {
        body = null;
      }
      if (xhr.status >= 200 && xhr.status < 300) return resolve(body as T);
      const err = (body as { error?: { code?: string; message?: string; fields?: Record<string, string> } } | null)?.error;
      const fallback =
        xhr.status === 413 ? 'The upload is too large' : xhr.status === 415 ? 'This file type is not accepted' : `Upload failed (${xhr.status})`;
      reject(new ApiError(xhr.status, err?.code ?? 'unknown', err?.message ?? fallback, err?.fields ?? {}));
    };
    xhr.send(form);
  });
  return { promise, abort: () => xhr.abort() };
}
