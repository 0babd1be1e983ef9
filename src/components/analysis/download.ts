/** Downloads built in the browser: CSV text from a chart's data, a PNG from its canvas. */
import { toCsv, type CsvFile } from '@/analysis/csv';

export function downloadBlob(fileName: string, blob: Blob) {
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = fileName;
  a.rel = 'noopener';
  document.body.appendChild(a);
  a.click();
  a.remove();
  // Give the browser a moment to start the download before the URL goes.
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}

export function downloadCsv(file: CsvFile) {
  downloadBlob(file.fileName, new Blob([toCsv(file.header, file.rows)], { type: 'text/csv;charset=utf-8' }));
}

/** A base64 data URL to a Blob without fetch (the page's CSP keeps connect-src to 'self'). */
export function dataUrlToBlob(dataUrl: string): Blob {
  const [head, body = ''] = dataUrl.split(',', 2);
  const type = /^data:([^;,]+)/.exec(head)?.[1] ?? 'application/octet-stream';
  const bin = atob(body);
  const bytes = new Uint8Array(bin.length);
  for (let i = 0; i < bin.length; i += 1) bytes[i] = bin.charCodeAt(i);
  return new Blob([bytes], { type });
}

export function downloadDataUrl(fileName: string, dataUrl: string) {
  downloadBlob(fileName, dataUrlToBlob(dataUrl));
}
