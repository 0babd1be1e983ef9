/**
 * The stability report (PDF) for the product file: generated on the server with
 * pdfmake, charts rendered by ECharts as SVG on the server, the shipped Inter
 * font, black-and-white friendly (verdicts in words, not colors).
 */
import { readFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { join } from 'node:path';
import * as echarts from 'echarts';
import { and, asc, eq, inArray } from 'drizzle-orm';
import { COMPARED_LEVEL_LABELS, type ComparedLevel } from '../../shared/compute/criteria';
import { reasonMethodName } from '../../shared/compute/suggest';
import { criterionText, formatDecimals } from '../../shared/criterion-text';
import { CONDITION_ROLE_LABELS, DECISION_OUTCOME_LABELS, PRODUCT_TYPE_LABELS, STUDY_STATUS_LABELS, type ProductType } from '../../shared/domain';
import type { Db } from '../db/client';
import { auditLog, batches, labs, photos } from '../db/schema';
import { analyzeStudy } from './analysis';
import { reviewOf } from './reviews';
import { studyDetail } from './studies';

const require = createRequire(import.meta.url);
// pdfmake's server build is CommonJS.
const pdfmake = require('pdfmake') as {
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
const VERDICT: Record<string, string> = { pass: 'pass', fail: 'FAIL', no_criterion: '', needs_baseline: 'no day 0', not_done: 'not done' };

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

/** One measured attribute over time, every series a line with its own dash pattern (black-and-white friendly). */
function chartSvg(title: string, unit: string | null, series: { name: string; points: [number, number][] }[], limit?: { lower?: number | null; upper?: number | null }): string {
  const chart = echarts.init(null, null, { renderer: 'svg', ssr: true, width: 720, height: 300 });
  const dashes = ['solid', 'dashed', 'dotted', [8, 3, 2, 3], [2, 2], [12, 4], [4, 4, 1, 4]] as const;
  const symbols = ['circle', 'rect', 'triangle', 'diamond', 'emptyCircle', 'emptyRect', 'emptyTriangle', 'pin'];
  chart.setOption({
    animation: false,
    backgroundColor: '#ffffff',
    textStyle: { fontFamily: 'Inter, sans-serif' },
    title: { text: title, left: 0, textStyle: { fontSize: 13, fontWeight: 600, color: '#111' } },
    legend: { bottom: 0, left: 0, textStyle: { fontSize: 10, color: '#222' } },
    grid: { left: 56, right: 16, top: 36, bottom: 64 },
    xAxis: { type: 'value', name: 'months', nameLocation: 'middle', nameGap: 22, axisLine: { lineStyle: { color: '#444' } }, splitLine: { show: false } },
    yAxis: {
      type: 'value',
      name: unit ?? '',
      scale: true,
      // Keep the acceptance limits in view.
      min: (v: { min: number }) => Math.min(v.min, limit?.lower ?? v.min),
      max: (v: { max: number }) => Math.max(v.max, limit?.upper ?? v.max), axisLine: { show: true, lineStyle: { color: '#444' } }, splitLine: { lineStyle: { color: '#e5e5e5' } } },
    series: series.map((s, i) => ({
      name: s.name,
      type: 'line',
      data: s.points,
      symbol: symbols[i % symbols.length],
      symbolSize: 6,
      lineStyle: { type: dashes[i % dashes.length], width: 1.5, color: ['#111', '#444', '#666', '#222', '#888'][i % 5] },
      itemStyle: { color: ['#111', '#444', '#666', '#222', '#888'][i % 5] },
      markLine:
        i === 0 && limit
          ? {
              symbol: 'none',
              label: { formatter: '{b}', fontSize: 9 },
              lineStyle: { type: 'dashed', color: '#000' },
              data: [
                ...(limit.lower != null ? [{ name: `limit ${+limit.lower.toFixed(2)}`, yAxis: limit.lower }] : []),
                ...(limit.upper != null ? [{ name: `limit ${+limit.upper.toFixed(2)}`, yAxis: limit.upper }] : []),
              ],
            }
          : undefined,
    })),
  });
  const svg = chart.renderToSVGString();
  chart.dispose();
  return svg;
}

export async function studyReportPdf(db: Db, labId: number, studyId: number, today: string, photosDir: string): Promise<Buffer> {
  const [lab] = await db.select().from(labs).where(eq(labs.id, labId));
  const d = await studyDetail(db, labId, studyId, today);
  const a = await analyzeStudy(db, labId, studyId, today, lab.q10);
  const review = await reviewOf(db, labId, studyId);
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
  const table = (widths: (string | number)[], head: string[] | null, body: unknown[][]) => ({
    table: { headerRows: head ? 1 : 0, widths, body: head ? [head.map((x) => ({ text: x, style: 'th' })), ...body] : body },
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
        ? table(['auto', '*', '*', 'auto'], ['Phase', 'Ingredient', 'INCI', '% w/w'], snap.map((l) => [l.phase ?? '', l.tradeName ?? l.ingredient ?? '', l.inciName ?? '', { text: Number(l.percent).toFixed(2), alignment: 'right' }]))
        : { text: 'No formula snapshot recorded for this lot.', italics: true },
    ];
  });

  // Charts per measured attribute: one line per variant and condition (mean of samples).
  const charts: unknown[] = [];
  for (const attr of a.attributes.filter((x) => x.kind === 'measured')) {
    const lines: { name: string; points: [number, number][] }[] = [];
    for (const v of a.variants) {
      for (const c of a.conditions) {
        const pts = a.series
          .filter((s) => s.variantId === v.id && s.studyConditionId === c.id && s.studyAttributeId === attr.id)
          .flatMap((s) => s.points.filter((p) => typeof p.value === 'number').map((p) => [p.months, p.value as number] as [number, number]));
        if (!pts.length) continue;
        const byT = new Map<number, number[]>();
        for (const [t, y] of pts) byT.set(t, [...(byT.get(t) ?? []), y]);
        lines.push({ name: `${v.code} ${c.name}`, points: [...byT.entries()].sort((x, y) => x[0] - y[0]).map(([t, ys]) => [Math.round(t * 100) / 100, ys.reduce((s, y) => s + y, 0) / ys.length]) });
      }
    }
    if (!lines.length) continue;
    const limit = a.limits.find((l) => l.studyAttributeId === attr.id)?.limit;
    charts.push({ svg: chartSvg(`${attr.name}${attr.unit ? ` (${attr.unit})` : ''}`, attr.unit, lines.slice(0, 8), limit ?? undefined), width: 500, margin: [0, 4, 0, 8] });
  }

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
      obsBody.push([p.sampleCode, variantName(s.variantId).split(' ·')[0], s.lotCode, initial ? 'Initial test' : condName(s.studyConditionId), p.label, attr.name, `${fmtValue(p.value, attr.kind === 'measured' ? attr.decimals : null)}${attr.unit && typeof p.value === 'number' ? ` ${attr.unit}` : ''}`, { text: VERDICT[p.verdict] ?? p.verdict, bold: p.verdict === 'fail' }]);
    }
  }

  const photoBlocks = [];
  for (const p of photoRows) {
    try {
      const img = await readFile(join(photosDir, p.storedName));
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
      const k = `${r.action} ${r.entity}`;
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
        ['Samples', `${d.samples.length} (${d.containerDescription || 'containers'})`],
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
      table(['*', 'auto', 'auto', 'auto'], ['Condition', 'Checkpoint', 'Due', 'State'], d.checkpoints.map((c) => [condName(c.studyConditionId), c.label, c.dueDate, c.state.charAt(0).toUpperCase() + c.state.slice(1) + (c.missedReason ? ` (${c.missedReason})` : '')])),
      h('Attributes and acceptance criteria'),
      table(['*', 'auto'], ['Attribute', 'Accepted when'], a.attributes.map((x) => [x.name, criterionText(x.criterion, { unit: x.unit, scale: x.scale })])),
      { text: 'Default criteria are common practice with no published source; the lab sets its own.', style: 'muted', margin: [0, 3, 0, 0] },
      h('Charts'),
      ...(charts.length ? charts : [{ text: 'No measured values yet.', italics: true }]),
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
              ...(dec.supersedeReason ? [{ text: `Supersedes decision ${dec.supersedesId}: ${dec.supersedeReason}`, style: 'muted' }] : []),
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
      auditSummary.length ? table(['*', 'auto'], ['Event', 'Count'], auditSummary.map(([k, n]) => [k.replace('_', ' '), String(n)])) : { text: 'No audit entries.', italics: true },
      { text: 'Labelling rules (EU Regulation 1223/2009 Art. 19(1)(c)) and safety substantiation (US MoCRA 2022) are stated as applied; the lab’s regulatory adviser and safety assessor have the last word.', style: 'muted', margin: [0, 12, 0, 0] },
    ],
  };
  return pdfmake.createPdf({ ...doc, content: printable(doc.content) }).getBuffer();
}
