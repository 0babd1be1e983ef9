/**
 * The stability report of the demo lab's studies (server/demo/, invented data), read back as text with
 * pdftotext and drawn as PNG pages with pdftoppm (into test-results/report/, to look at): a decided
 * study, the running A vs B study with freeze-thaw cycles, and a long real-time study.
 */
import { execFileSync } from 'node:child_process';
import { mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp, DEMO, type Client, type TestApp } from '../helpers/app';

let t: TestApp;
let formulator: Client;
let studies: { id: number; title: string; status: string }[];
const OUT = join(process.cwd(), 'test-results', 'report');

beforeAll(async () => {
  t = await createTestApp({}, { demo: 'full' });
  formulator = await t.signIn(DEMO.formulator);
  studies = (await formulator.get('/api/studies')).body.studies;
  mkdirSync(OUT, { recursive: true });
}, 120_000);
afterAll(async () => t?.close());

async function report(title: string, name: string): Promise<{ text: string; file: string }> {
  const s = studies.find((x) => x.title.includes(title))!;
  const res = await formulator.agent.get(`/api/studies/${s.id}/report.pdf`).buffer(true).parse((r, cb) => {
    const chunks: Buffer[] = [];
    r.on('data', (c: Buffer) => chunks.push(c));
    r.on('end', () => cb(null, Buffer.concat(chunks)));
  });
  expect(res.status).toBe(200);
  const file = join(OUT, `${name}.pdf`);
  writeFileSync(file, res.body as Buffer);
  rmSync(join(OUT, name), { recursive: true, force: true });
  mkdirSync(join(OUT, name));
  execFileSync('pdftoppm', ['-r', '60', '-png', file, join(OUT, name, 'page')]);
  return { text: execFileSync('pdftotext', ['-layout', file, '-']).toString(), file };
}

describe('the stability report of the demo studies', () => {
  it('reads cleanly: round axis ticks, no long floats, the samples row once, a chart per condition with cycles apart', async () => {
    for (const [title, name] of [
      ['12 weeks accelerated', 'decided'],
      ['A vs B', 'a-vs-b'],
      ['real time at 25', 'real-time'],
    ] as const) {
      const { text } = await report(title, name);
      expect(text, name).toContain('Stability report');
      // no binary noise such as 5.016666666666667 anywhere (axis ticks, limits, tables)
      expect(text, name).not.toMatch(/\d\.\d{6,}/);
      // the fill is written once, whether or not the container description already has it
      const samples = text.split('\n').find((l) => /^\s*Samples\s/.test(l))!;
      expect(samples, name).toMatch(/\d+ samples: 50 mL PET jar, PP lid, filled to 45 g\s*$/);
      expect(samples.match(/45 g/g), name).toHaveLength(1);
      // a heading on one line
      expect(text, name).toContain('% w/w');
      expect(text, name).toContain('Months');
    }
    // freeze-thaw on an axis of its own, counted in cycles
    const avb = await report('A vs B', 'a-vs-b');
    expect(avb.text).toContain('Freeze-thaw cycles');
  }, 180_000);
});
