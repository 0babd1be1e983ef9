/**
 * Reads a QR code from a camera's video: the browser's own BarcodeDetector where it reads QR
 * codes, else jsQR (loaded only when needed, so the Bench's first load stays small).
 */

/** The part of the Barcode Detection API used here (not in TypeScript's DOM types yet). */
interface Detector {
  detect(source: CanvasImageSource): Promise<{ rawValue: string }[]>;
}
interface DetectorClass {
  new (options: { formats: string[] }): Detector;
  getSupportedFormats?(): Promise<string[]>;
}

export type QrReader = (video: HTMLVideoElement) => Promise<string | null>;

/** Which reader this browser gets: 'native' (BarcodeDetector) or 'jsqr'. */
export async function makeQrReader(): Promise<{ kind: 'native' | 'jsqr'; read: QrReader }> {
  const Native = (globalThis as { BarcodeDetector?: DetectorClass }).BarcodeDetector;
  if (Native) {
    const formats = (await Native.getSupportedFormats?.().catch(() => [])) ?? [];
    if (formats.includes('qr_code')) {
      const detector = new Native({ formats: ['qr_code'] });
      return {
        kind: 'native',
        read: async (video) => (await detector.detect(video).catch(() => []))[0]?.rawValue ?? null,
      };
    }
  }
  const { default: jsQR } = await import('jsqr');
  const canvas = document.createElement('canvas');
  const ctx = canvas.getContext('2d', { willReadFrequently: true });
  return {
    kind: 'jsqr',
    read: async (video) => {
      if (!ctx || !video.videoWidth) return null;
      // At most 800 px across: a label's QR code still reads, and each frame stays quick on a phone.
      const scale = Math.min(1, 800 / video.videoWidth);
      canvas.width = Math.round(video.videoWidth * scale);
      canvas.height = Math.round(video.videoHeight * scale);
      ctx.drawImage(video, 0, 0, canvas.width, canvas.height);
      const img = ctx.getImageData(0, 0, canvas.width, canvas.height);
      return jsQR(img.data, img.width, img.height, { inversionAttempts: 'dontInvert' })?.data ?? null;
    },
  };
}

/** A message for a refused or missing camera, in the words a technician needs. */
export function cameraProblem(e: unknown): string {
  const name = (e as { name?: string } | null)?.name ?? '';
  if (name === 'NotAllowedError' || name === 'SecurityError') return 'The camera was not allowed. Allow it for this site in the browser, or type the code.';
  if (name === 'NotFoundError' || name === 'OverconstrainedError') return 'No camera was found on this device. Type the code or use a hand-held scanner.';
  if (name === 'NotReadableError') return 'The camera is in use by another app. Close it and try again, or type the code.';
  return 'The camera could not be started. Type the code or use a hand-held scanner.';
}
