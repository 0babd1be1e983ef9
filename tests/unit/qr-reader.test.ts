/**
 * src/components/bench/qrReader.ts: which reader a browser gets, that a label's QR code as the label
 * sheet draws it (LabelsView: `qrcode`, error correction M, margin 2) reads back through the jsQR path
 * with the same options and the same 800 px cap, and the camera messages.
 * Outside references: the QR encoder (`qrcode`) and decoder (`jsQR`) are independent libraries of
 * ISO/IEC 18004; a code decoded by one from the other's matrix is the check.
 */
// @vitest-environment happy-dom
import jsQR from 'jsqr';
import QRCode from 'qrcode';
import { afterEach, describe, expect, it } from 'vitest';
import { sampleCodeFrom } from '../../shared/compute/bench';
import { cameraProblem, makeQrReader } from '../../src/components/bench/qrReader';

/** A QR code as RGBA pixels: dark modules black, `px` pixels per module, the label's quiet zone. */
function qrPixels(text: string, px: number, margin = 2) {
  const qr = QRCode.create(text, { errorCorrectionLevel: 'M' });
  const n = qr.modules.size;
  const side = (n + 2 * margin) * px;
  const data = new Uint8ClampedArray(side * side * 4).fill(255);
  for (let y = 0; y < side; y++) {
    for (let x = 0; x < side; x++) {
      const mx = Math.floor(x / px) - margin;
      const my = Math.floor(y / px) - margin;
      if (mx >= 0 && my >= 0 && mx < n && my < n && qr.modules.get(my, mx)) {
        const i = (y * side + x) * 4;
        data[i] = data[i + 1] = data[i + 2] = 0;
      }
    }
  }
  return { data, width: side, height: side };
}

/** Nearest-neighbour downscale, as a canvas drawImage to at most 800 px across does in effect. */
function scaleTo(img: { data: Uint8ClampedArray; width: number; height: number }, width: number) {
  const height = Math.round((img.height * width) / img.width);
  const out = new Uint8ClampedArray(width * height * 4);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const sx = Math.floor((x * img.width) / width);
      const sy = Math.floor((y * img.height) / height);
      out.set(img.data.subarray((sy * img.width + sx) * 4, (sy * img.width + sx) * 4 + 4), (y * width + x) * 4);
    }
  }
  return { data: out, width, height };
}

const g = globalThis as { BarcodeDetector?: unknown };
afterEach(() => {
  delete g.BarcodeDetector;
});

describe('a label QR code read back', () => {
  it('decodes the label URL with the reader\'s jsQR options, and the Bench finds the sample code in it', () => {
    const url = 'https://lab.example/samples/K7QM2X';
    const img = qrPixels(url, 8);
    const read = jsQR(img.data, img.width, img.height, { inversionAttempts: 'dontInvert' });
    expect(read?.data).toBe(url);
    expect(sampleCodeFrom(read!.data)).toBe('K7QM2X');
  });

  it('still decodes after the 800 px cap shrinks a large camera frame', () => {
    const url = 'http://127.0.0.1:3000/samples/AB12CD34';
    const big = qrPixels(url, 40); // about 1,300 px across, wider than the cap
    expect(big.width).toBeGreaterThan(800);
    const small = scaleTo(big, 800);
    expect(jsQR(small.data, small.width, small.height, { inversionAttempts: 'dontInvert' })?.data).toBe(url);
  });
});

describe('makeQrReader', () => {
  it('uses the browser\'s BarcodeDetector when it reads QR codes', async () => {
    const seen: string[][] = [];
    g.BarcodeDetector = class {
      static getSupportedFormats = async () => ['ean_13', 'qr_code'];
      constructor(o: { formats: string[] }) {
        seen.push(o.formats);
      }
      async detect() {
        return [{ rawValue: 'https://lab.example/samples/K7QM2X' }];
      }
    };
    const r = await makeQrReader();
    expect(r.kind).toBe('native');
    expect(seen).toEqual([['qr_code']]);
    expect(await r.read({} as HTMLVideoElement)).toBe('https://lab.example/samples/K7QM2X');
  });

  it('falls back to jsQR when the detector has no QR format, and reads nothing before the video has a frame', async () => {
    g.BarcodeDetector = class {
      static getSupportedFormats = async () => ['ean_13'];
      async detect() {
        return [];
      }
    };
    const r = await makeQrReader();
    expect(r.kind).toBe('jsqr');
    expect(await r.read({ videoWidth: 0, videoHeight: 0 } as HTMLVideoElement)).toBeNull();
  });

  it('treats a failing detect() as no code, not an error', async () => {
    g.BarcodeDetector = class {
      static getSupportedFormats = async () => ['qr_code'];
      async detect(): Promise<never> {
        throw new Error('frame not ready');
      }
    };
    const r = await makeQrReader();
    expect(await r.read({} as HTMLVideoElement)).toBeNull();
  });
});

describe('cameraProblem', () => {
  it('says what to do for each refusal the browser reports', () => {
    expect(cameraProblem({ name: 'NotAllowedError' })).toMatch(/not allowed.*type the code/i);
    expect(cameraProblem({ name: 'NotFoundError' })).toMatch(/No camera was found/);
    expect(cameraProblem({ name: 'NotReadableError' })).toMatch(/in use by another app/);
    expect(cameraProblem(null)).toMatch(/could not be started/);
  });
});
