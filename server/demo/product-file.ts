/**
 * The demo's product file: the body butter assessed as low risk (anhydrous), the hand cream B as not
 * low risk (an emulsion in a jar) with an invented challenge-test report attached as a real PDF.
 * Every figure in the report is made up for demonstration; it is not a laboratory result.
 */
import { and, eq } from 'drizzle-orm';
import type { DbOrTx } from '../db/client';
import { batches } from '../db/schema';
import type { FileStore } from '../files';
import { simplePdf } from '../services/pdf-engine';
import { saveDocument } from '../services/product-file/documents';
import { saveRisk } from '../services/product-file/risk';
import type { SeededFormulas } from './formulas';

const ORGANISMS = ['Pseudomonas aeruginosa', 'Staphylococcus aureus', 'Escherichia coli', 'Candida albicans', 'Aspergillus brasiliensis'] as const;

function daysAgo(days: number, now: Date): string {
  return new Date(now.getTime() - days * 86_400_000).toISOString().slice(0, 10);
}

export async function seedProductFile(tx: DbOrTx, labId: number, formulator: number, catalogue: SeededFormulas, files: FileStore, now = new Date()): Promise<void> {
  const who = { id: formulator, labId };
  // The body butter's lot was poured hot (invented): the batch carries its filling temperature.
  await tx.update(batches).set({ fillingTempC: 70 }).where(and(eq(batches.labId, labId), eq(batches.variantId, catalogue.variants.bodyButterA)));
  await saveRisk(tx, who, catalogue.variants.bodyButterA, {
    ph: null,
    waterActivity: null,
    fillingTempC: 70,
    fillingTempSource: 'Batch record: melted butters poured at 70 °C (demo, invented)',
    pack: 'open_jar',
    solventBased: false,
    oxidising: false,
    inUseMonths: null,
    decidedPaoMonths: 12,
    note: 'Demo assessment, invented.',
  });
  await saveRisk(tx, who, catalogue.variants.handCreamB, {
    ph: 5.5,
    phSource: 'Demo: initial test, invented',
    waterActivity: 0.98,
    waterActivitySource: 'Demo: invented',
    fillingTempC: 40,
    fillingTempSource: 'Demo: filled after cooling',
    pack: 'open_jar',
    solventBased: false,
    oxidising: false,
    inUseMonths: 6,
    decidedPaoMonths: null,
    note: 'Demo assessment, invented.',
  });
  const date = daysAgo(20, now);
  const pdf = await simplePdf('Preservative efficacy test report (DEMO, invented)', [
    'Sample: Calendula hand cream, variant B (5 % emulsifier + 0.3 % xanthan).',
    'Method: ISO 11930 challenge test, 28 days. Invented figures for the Keepwell demo; not a laboratory result.',
    ...ORGANISMS.map((o) => `${o}: meets criterion A (invented).`),
    'Conclusion: criteria A met (invented).',
  ]);
  await saveDocument(
    tx,
    files,
    who,
    { variantId: catalogue.variants.handCreamB, studyId: null, label: 'variant B' },
    {
      kind: 'challenge_test',
      title: 'Challenge test, hand cream B (demo)',
      documentDate: date,
      author: 'Demo contract laboratory (invented)',
      summary: 'ISO 11930 challenge test over 28 days: every organism meets criterion A. Invented for the demo.',
      criteria: 'A',
      organisms: ORGANISMS.map((organism) => ({ organism, result: 'meets' as const })),
    },
    { originalname: 'challenge-test-hand-cream-B.pdf', buffer: pdf, size: pdf.length },
  );
}
