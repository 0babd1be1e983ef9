/**
 * The stability report (PDF) for the product file: generated on the server with
 * pdfmake, charts rendered by ECharts as SVG on the server, the shipped Inter
 * font, black-and-white friendly (verdicts in words, not colors).
 */
import { and, asc, eq, inArray } from 'drizzle-orm';
import { COMPARED_LEVEL_LABELS, type ComparedLevel } from '../../shared/compute/criteria';
import { reasonMethodName } from '../../shared/compute/suggest';
import { auditKindLabel } from '../../shared/audit-words';
import { scheduleStateText } from '../../shared/schedule-words';
import { criterionText, formatDecimals } from '../../shared/criterion-text';
import { CONDITION_ROLE_LABELS, DECISION_OUTCOME_LABELS, PRODUCT_TYPE_LABELS, STUDY_STATUS_LABELS, type ProductType } from '../../shared/domain';
import type { Db } from '../db/client';
import { photoKey, readAll, type FileStore } from '../files';
import { auditLog, batches, labs, photos } from '../db/schema';
import { analyzeStudy } from './analysis';
import { photoColourSection } from './photo-colour/report-section';
import { attributeCharts } from './report-charts';
import { reviewOf } from './reviews';
import { studyDetail } from './studies';
import { studyProductFile } from './product-file/expected';
import { productFileSection } from './product-file/report-section';
import { pdfmake } from './pdf-engine';

const OOS_BENCH_WORDS = { unconfirmed: 'Unconfirmed', remeasured: 'Re-measured', confirmed: 'Confirmed at the bench' } as const;
/** The shipped Inter subset lacks some symbols: spell them so no empty boxes print. */
function printable<T>(x: T): T {
  if (typeof x === 'string') return x.replace(/Δ/g, 'Delta ').replace(/≈/g, '~').replace(/≤/g, '<=').replace(/≥/g, '>=').replace(/√/g, 'sqrt').replace(/·/g, '·') as T;
  if (Array.isArray(x)) return x.map(printable) as T;
  if (x && typeof x === 'object' && !(x instanceof Buffer)) {
    return Object.fromEntries(Object.entries(x).map(([k, v]) => [k, k === 'svg' || k === 'image' ? v : printable(v)])) as T;
  }
  return x;
}

/** A reading in its attribute's terms; numbers with the attribute's decimals ("5.50", not "5.5"). */
const fmtValue = (v: unknown, decimals: number | null = null) =>
  v == null
    ? '—'
    : typeof v === 'boolean'
      ? (v ? 'pass' : 'fail')
      : typeof v === 'string'
        ? (COMPARED_LEVEL_LABELS[v as ComparedLevel] ?? v)
        : typeof v === 'number' && decimals != null
          ? formatDecimals(v, decimals)
          : String(v);
const VERDICT: Record<string, string> = { pass: 'pass', fail: 'FAIL', no_criterion: '', needs_baseline: 'no initial value', not_done: 'not done' };

type PdfNodeInfo = { headlineLevel?: number; style?: unknown; table?: unknown; columns?: unknown; stack?: boolean };
/**
 * pageBreakBefore for pdfmake: a heading (a node with a headlineLevel) moves to the next page when nothing of what it
 * heads follows it on its page. Other headings, the running header and footer, containers and a table's head row
 * ('th') do not count. pdfmake reports an unbreakable block (a table's head row, a decision) on the page where it would
 * have started even when it moved on, so a heading cannot rely on one: the decisions' heading sits inside the first.
 */
function headingEndsPage(node: PdfNodeInfo, nodes: { getFollowingNodesOnPage(): PdfNodeInfo[] }): boolean {
  if (node.headlineLevel == null) return false;
  return !nodes.getFollowingNodesOnPage().some((n) => n.headlineLevel == null && n.style !== 'running' && n.style !== 'th' && !n.table && !n.columns && !n.stack);
}

/** "10 samples: 50 mL PET jar, PP lid, filled to 45 g", the fill written once even when the description has it. */
export function samplesText(n: number, description: string | null | undefined, fillGrams: number | null | undefined): string {
  const desc = (description ?? '').trim();
  const fill = fillGrams != null && Number.isFinite(fillGrams) && fillGrams > 0 ? `${+fillGrams.toFixed(2)} g` : null;
  const hasFill = fill !== null && (desc.includes(fill) || desc.replace(/\s+/g, '').includes(fill.replace(/\s+/g, '')));
  const parts = [desc, fill && !hasFill ? `filled to ${fill}` : ''].filter(Boolean).join(', ');
  return `${n} ${n === 1 ? 'sample' : 'samples'}${parts ? `: ${parts}` : ''}`;
}

export async function studyReportPdf(db: Db, labId: number, studyId: number, today: string, files: FileStore): Promise<Buffer> {
  const [lab] = await db.select().from(labs).where(eq(labs.id, labId));
  const d = await studyDetail(db, labId, studyId, today);
  const a = await analyzeStudy(db, labId, studyId, today, lab.q10);
  const review = await reviewOf(db, labId, studyId);
  const productFile = await studyProductFile(db, labId, studyId);
  const batchRows = await db.select().from(batches).where(inArray(batches.id, d.batches.map((b) => b.id)));
  const auditRows = await db
    .select({ action: auditLog.action, entity: auditLog.entity })
    .from(auditLog)
    .where(and(eq(auditLog.labId, labId), eq(auditLog.studyId, studyId)));
  const photoRows = await db.select().from(photos).where(and(eq(photos.labId, labId), eq(photos.studyId, studyId))).orderBy(asc(photos.id)).limit(12);

  const variantName = (id: number) => {
    const v = a.variants.find((x) => x.id === id);
    return v ? `${v.code} · ${v.name}` : String(id);
  };
  const condName = (id: number | null) => (id == null ? 'Initial test (before storage)' : (a.conditions.find((c) => c.id === id)?.name ?? String(id)));
  const h = (text: string) => ({ text, style: 'h2', margin: [0, 14, 0, 6], headlineLevel: 1 });
  const table = (widths: (string | number)[], head: (string | { text: string; noWrap?: boolean; alignment?: string })[] | null, body: unknown[][]) => ({
    table: { headerRows: head ? 1 : 0, widths, body: head ? [head.map((x) => (typeof x === 'string' ? { text: x, style: 'th' } : { ...x, style: 'th' })), ...body] : body },
    layout: { hLineWidth: (i: number) => (i <= 1 ? 0.8 : 0.3), vLineWidth: () => 0, hLineColor: () => '#555', paddingTop: () => 3, paddingBottom: () => 3 },
    fontSize: 8.5,
  });

  // Formulas as of the batches.
  const formulas = batchRows.map((b) => {
    type SnapLine = { phase?: string; tradeName?: string; inciName?: string; ingredient?: string; percent: number };
    const raw = b.formulaSnapshot as SnapLine[] | { lines?: SnapLine[] } | null;
    const snap: SnapLine[] = Array.isArray(raw) ? raw : (raw?.lines ?? []);
    return [
      { text: `Lot ${b.lotCode} (${variantName(b.variantId)}), made ${b.madeOn}, ${b.sizeGrams} g, ${b.packaging}`, bold: true, margin: [0, 6, 0, 2], headlineLevel: 2 },
      snap.length
        ? table(['auto', '*', '*', 'auto'], ['Phase', 'Ingredient', 'INCI', { text: '% w/w', noWrap: true, alignment: 'right' }], snap.map((l) => [l.phase ?? '', l.tradeName ?? l.ingredient ?? '', l.inciName ?? '', { text: Number(l.percent).toFixed(2), alignment: 'right' }]))
        : { text: 'No formula snapshot recorded for this lot.', italics: true },
    ];
  });

  // Charts per measured attribute: one per condition, a line per variant (report-charts.ts).
  const charts = a.attributes.filter((x) => x.kind === 'measured').flatMap((attr) => attributeCharts(a, attr));

  // Every observation, in long format.
  // The initial test appears in every condition's series (it is each one's t = 0): list its readings once.
  const obsBody: unknown[][] = [];
  const initialIds = new Set(d.checkpoints.filter((c) => c.kind === 'initial').map((c) => c.id));
  const listed = new Set<string>();
  for (const s of a.series) {
    const attr = a.attributes.find((x) => x.id === s.studyAttributeId)!;
    for (const p of s.points) {
      const initial = initialIds.has(p.checkpointId);
      const key = `${p.checkpointId}:${p.sampleCode}:${s.studyAttributeId}`;
      if (initial && listed.has(key)) continue;
      listed.add(key);
      // codes, checkpoints and values on one line each (a lot code broken at its hyphens reads as two)
      const one = (text: string) => ({ text, noWrap: text.length <= 24 });
      obsBody.push([one(p.sampleCode), one(variantName(s.variantId).split(' ·')[0]), one(s.lotCode), initial ? 'Initial test' : condName(s.studyConditionId), one(p.label), attr.name, one(`${fmtValue(p.value, attr.kind === 'measured' ? attr.decimals : null)}${attr.unit && typeof p.value === 'number' ? ` ${attr.unit}` : ''}`), { text: VERDICT[p.verdict] ?? p.verdict, bold: p.verdict === 'fail', noWrap: true }]);
    }
  }

  const photoBlocks = [];
  for (const p of photoRows) {
    try {
      const img = await readAll(files, photoKey(p.storedName));
      const sample = d.samples.find((s) => s.id === p.sampleId);
      const cp = d.checkpoints.find((c) => c.id === p.checkpointId);
      photoBlocks.push({ stack: [{ image: `data:${p.mime};base64,${img.toString('base64')}`, fit: [150, 110] }, { text: `${sample?.code ?? ''} · ${cp?.label ?? ''}${p.caption ? ` · ${p.caption}` : ''}`, fontSize: 7.5 }], width: 160, margin: [0, 0, 8, 8] });
    } catch {
      /* a missing file is left out of the report */
    }
  }
  const photoRowsOut = [];
  for (let i = 0; i < photoBlocks.length; i += 3) photoRowsOut.push({ columns: photoBlocks.slice(i, i + 3), columnGap: 6 });

  const auditSummary = Object.entries(
    auditRows.reduce<Record<string, number>>((acc, r) => {
      const k = auditKindLabel(r.action, r.entity);
      acc[k] = (acc[k] ?? 0) + 1;
      return acc;
    }, {}),
  );

  const doc = {
    info: { title: `Stability report: ${d.title}`, author: lab.name, creator: 'Keepwell' },
    pageSize: 'A4',
    pageMargins: [48, 64, 48, 56],
    defaultStyle: { font: 'Inter', fontSize: 9.5, color: '#111', lineHeight: 1.2 },
    styles: {
      h1: { fontSize: 18, bold: true, margin: [0, 0, 0, 4] },
      h2: { fontSize: 12.5, bold: true },
      th: { bold: true, fontSize: 8.5 },
      muted: { color: '#444', fontSize: 8.5 },
      running: { color: '#444', fontSize: 8.5 },
    },
    pageBreakBefore: headingEndsPage,
    header: (page: number) =>
      page === 1
        ? null
        : { columns: [{ text: `Stability report · ${d.title}`, style: 'running' }, { text: `${lab.name} · ${today}`, style: 'running', alignment: 'right' }], margin: [48, 28, 48, 0] },
    footer: (page: number, pages: number) => ({
      columns: [{ text: 'Generated by Keepwell. A suggested shelf life supports, and does not replace, a qualified safety assessor.', style: 'running', fontSize: 7 }, { text: `Page ${page} of ${pages}`, style: 'running', alignment: 'right' }],
      margin: [48, 16, 48, 0],
    }),
    content: [
      { text: lab.name, style: 'muted' },
      { text: 'Stability report', style: 'h1' },
      { text: d.title, fontSize: 13, margin: [0, 0, 0, 10] },
      table(['auto', '*'], null, [
        ['Product', `${d.product.name} (${PRODUCT_TYPE_LABELS[d.product.type as ProductType] ?? d.product.type})`],
        ['Study status', STUDY_STATUS_LABELS[d.status]],
        ['Day 0', d.startDate],
        ['Responsible', d.responsible?.name ?? '—'],
        ['Samples', samplesText(d.samples.length, d.containerDescription, d.fillGrams)],
        ['Report date', today],
      ]),
      h('Variants and formulas (as made in each lot)'),
      ...formulas.flat(),
      h('Storage conditions and chamber records'),
      table(['*', 'auto', 'auto', 'auto', 'auto', 'auto', 'auto'], ['Condition', 'Role', 'Location', 'Logged', 'Min–max °C', 'Mean °C', 'MKT °C'], a.conditions.map((c) => [
        c.name,
        CONDITION_ROLE_LABELS[c.role as keyof typeof CONDITION_ROLE_LABELS] ?? c.role,
        c.location || '—',
        c.mkt ? `${c.mkt.firstOn} to ${c.mkt.lastOn}` : '—',
        c.mkt ? `${c.mkt.minC} – ${c.mkt.maxC}` : 'no log',
        c.mkt ? String(c.mkt.meanC) : '—',
        c.mkt ? String(c.mkt.mktC) : '—',
      ])),
      { text: 'MKT: mean kinetic temperature, ΔH/R = 10 000 K (Haynes 1971, as used in USP <1160>), over the chamber log readings between day 0 and the report date; "Logged" gives the days the log covers.', style: 'muted', margin: [0, 3, 0, 0] },
      h('Schedule'),
      table(['*', 'auto', 'auto', 'auto'], ['Condition', 'Checkpoint', 'Due', 'State'], d.checkpoints.map((c) => [condName(c.studyConditionId), c.label, c.dueDate, scheduleStateText(c.state, d.status) + (c.missedReason ? ` (${c.missedReason})` : '')])),
      h('Attributes and acceptance criteria'),
      table(['*', 'auto'], ['Attribute', 'Accepted when'], a.attributes.map((x) => [x.name, criterionText(x.criterion, { unit: x.unit, scale: x.scale })])),
      { text: 'Default criteria are common practice with no published source; the lab sets its own.', style: 'muted', margin: [0, 3, 0, 0] },
      // the heading sits inside the first attribute's block, so it never ends a page alone (see headingEndsPage)
      ...(charts.length
        ? [{ ...(charts[0] as { stack: unknown[] }), stack: [h('Charts'), { text: 'One chart per condition; each variant keeps its marker and line pattern on every chart. Values are means of the samples at each checkpoint.', style: 'muted' }, ...(charts[0] as { stack: unknown[] }).stack] }, ...charts.slice(1)]
        : [h('Charts'), { text: 'No measured values yet.', italics: true }]),
      ...photoColourSection(a, h),
      h('Suggested shelf life and reasons'),
      ...a.suggestions.flatMap((s) => [
        { text: `${variantName(s.variantId)}: ${s.result.months != null ? `${s.result.months} months` : 'no figure yet'} (${s.result.basis.replace('_', ' ')})`, bold: true, margin: [0, 6, 0, 2], headlineLevel: 2 },
        s.result.reasons.length
          ? table(['auto', 'auto', 'auto', 'auto', '*'], ['Attribute', 'Condition', 'Method', 'Months', 'Rule and data'], s.result.reasons.map((r) => [r.attribute, r.condition, reasonMethodName(r), r.figureMonths != null ? r.figureMonths.toFixed(1) : '—', `${r.rule} ${r.message} (${r.dataPoints} results)`]))
          : { text: 'No reasons yet.', italics: true },
        ...(s.result.gates.length ? [{ text: `Gates: ${s.result.gates.map((g) => g.message).join(' ')}`, margin: [0, 3, 0, 0] }] : []),
        { text: s.result.confidenceNote, style: 'muted', margin: [0, 3, 0, 0] },
      ]),
      { text: a.suggestions[0]?.result.caution ?? '', italics: true, margin: [0, 6, 0, 0] },
      ...productFileSection(productFile, h, table),
      h('Out-of-specification results'),
      review.investigations.length
        ? table(
            ['auto', 'auto', '*', 'auto', '*', '*'],
            ['Sample', 'Checkpoint', 'Attribute and result', 'At the bench', 'Investigation', 'Conclusion'],
            review.investigations.map((i) => [
              `${i.sampleCode} (${i.variant}, ${i.lotCode})`,
              `${i.condition ?? 'Initial test'} ${i.checkpoint.label}`,
              `${i.attribute.name}: ${fmtValue(i.failed.value, i.attribute.decimals)}${i.attribute.unit && typeof i.failed.value === 'number' ? ` ${i.attribute.unit}` : ''}. ${i.failed.message}`,
              [OOS_BENCH_WORDS[i.benchStep], i.remeasure ? `re-measured ${fmtValue(i.remeasure.value, i.attribute.decimals)}` : '', i.benchComment ?? ''].filter(Boolean).join('; '),
              i.checks ? `Instrument: ${i.checks.instrument} Method: ${i.checks.method} Sample: ${i.checks.sample} Calculation: ${i.checks.calculation}` : 'Open',
              i.status === 'open'
                ? { text: 'OPEN', bold: true }
                : `${i.conclusion === 'invalidated' ? `Invalidated as a lab error; the valid re-test ${fmtValue(i.retest?.value ?? null, i.attribute.decimals)} is used` : 'Confirmed'}: ${i.reason ?? ''} (${i.closed?.by}, ${i.closed?.at.slice(0, 10)})`,
            ]),
          )
        : { text: 'None: no result failed its criterion.', italics: true },
      h('Every observation'),
      obsBody.length ? table(['auto', 'auto', 'auto', '*', 'auto', '*', 'auto', 'auto'], ['Sample', 'Var.', 'Lot', 'Condition', 'Checkpoint', 'Attribute', 'Value', 'Verdict'], obsBody) : { text: 'No observations recorded.', italics: true },
      ...(photoRowsOut.length ? [h('Photos at key checkpoints'), ...photoRowsOut] : []),
      ...(review.decisions.length
        ? review.decisions.map((dec, i) => ({
            stack: [
              ...(i === 0 ? [h('Decision and signatures')] : []), // kept with the first decision (see headingEndsPage)
              { text: `${dec.variant}: ${DECISION_OUTCOME_LABELS[dec.outcome]}${dec.supersededById ? ' (superseded)' : ''}`, bold: true },
              { text: [dec.shelfLifeMonths ? `Shelf life ${dec.shelfLifeMonths} months. ` : '', dec.paoMonths ? `Period after opening ${dec.paoMonths} months. ` : '', dec.conditionsText ?? '', dec.comment ? ` ${dec.comment}` : ''].join('') },
              ...(dec.labelText ? [{ text: dec.labelText, style: 'muted' }] : []),
              ...(dec.supersedeReason ? [{ text: `Supersedes decision no. ${dec.supersedesNo ?? dec.supersedesId}: ${dec.supersedeReason}`, style: 'muted' }] : []),
              {
                table: {
                  widths: ['auto', '*'],
                  body: [
                    ['Signed by', dec.signerName],
                    ['Signed at (UTC)', dec.signedAt.replace('T', ' ').slice(0, 19)],
                    ['Meaning', dec.meaning],
                    ['Data covered (SHA-256)', { text: dec.dataHash, fontSize: 7 }],
                    ['Covers the current data', dec.coversCurrentData ? 'yes' : 'NO: the data changed after signing'],
                  ],
                },
                layout: 'lightHorizontalLines',
                fontSize: 8.5,
                margin: [0, 4, 0, 0],
              },
            ],
            margin: [0, 4, 0, 10],
            unbreakable: true,
          }))
        : [h('Decision and signatures'), { text: 'No decision has been signed yet.', italics: true }]),
      h('Audit summary'),
      auditSummary.length ? table(['*', 'auto'], ['Event', 'Count'], auditSummary.map(([k, n]) => [k, String(n)])) : { text: 'No audit entries.', italics: true },
      { text: 'Labelling rules (EU Regulation 1223/2009 Art. 19(1)(c)) and safety substantiation (US MoCRA 2022) are stated as applied; the lab’s regulatory adviser and safety assessor have the last word.', style: 'muted', margin: [0, 12, 0, 0] },
    ],
  };
  return pdfmake.createPdf({ ...doc, content: printable(doc.content) }).getBuffer();
}
