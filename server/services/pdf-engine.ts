/**
 * pdfmake set up once for every PDF the server makes (the stability report, the demo's documents):
 * the shipped Inter font files and nothing else. pdfmake's server build is CommonJS.
 */
import { createRequire } from 'node:module';
import { join } from 'node:path';

const require = createRequire(import.meta.url);
export const pdfmake = require('pdfmake') as {
  setFonts(f: object): void;
  setUrlAccessPolicy(cb: (url: string) => boolean): void;
  setLocalAccessPolicy(cb: (path: string) => boolean): void;
  createPdf(doc: object): { getBuffer(): Promise<Buffer> };
};
const INTER = join(require.resolve('@fontsource/inter/package.json'), '..', 'files');
pdfmake.setFonts({
  Inter: {
    normal: join(INTER, 'inter-latin-400-normal.woff'),
    bold: join(INTER, 'inter-latin-600-normal.woff'),
    italics: join(INTER, 'inter-latin-400-normal.woff'),
    bolditalics: join(INTER, 'inter-latin-600-normal.woff'),
  },
});
// Nothing is fetched from outside; only the shipped font files are read from disk.
pdfmake.setUrlAccessPolicy(() => false);
pdfmake.setLocalAccessPolicy((p) => p.startsWith(INTER));

/** A one-page PDF with a title and lines of text (the demo's and the tests' documents). */
export async function simplePdf(title: string, lines: string[]): Promise<Buffer> {
  return pdfmake
    .createPdf({ info: { title }, defaultStyle: { font: 'Inter', fontSize: 10 }, content: [{ text: title, fontSize: 15, bold: true, margin: [0, 0, 0, 8] }, ...lines.map((text) => ({ text, margin: [0, 0, 0, 4] }))] })
    .getBuffer();
}
