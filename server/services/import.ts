/**
 * Bulk import of instrument readings (CSV: sample code, attribute, value, time
 * read). Preview answers the first lines, the counts and the problems (capped: a
 * file may have 100 000+ lines); import is all or nothing.
 */
import { parse as parseCsv } from 'csv-parse/sync';
import { and, eq, inArray } from 'drizzle-orm';
import { COMPARED_LEVELS, type ComparedLevel } from '../../shared/compute/criteria';
import { addDays, localDateInZone } from '../../shared/compute/schedule';
import { isCalendarDate } from '../../shared/schemas/common';
import type { ImportPreview, ImportPreviewRow } from '../../shared/schemas/records';
import type { Db, DbOrTx } from '../db/client';
import { attributes, checkpoints, observations, samples, studies, studyAttributes } from '../db/schema';
import { conflict, HttpError, notFound } from '../http/errors';
import { recordObservations, type Recorder } from './records';

const HEADERS: Record<string, string[]> = {
  sample: ['sample', 'sample code', 'sample_code', 'code'],
  attribute: ['attribute', 'attribute code', 'attribute_code', 'test'],
  value: ['value', 'result', 'reading'],
  readAt: ['time read', 'read at', 'read_at', 'time', 'timestamp', 'date'],
};

function parseValue(kind: string, raw: string): number | string | boolean | string {
  const s = raw.trim();
  switch (kind) {
    case 'measured': {
      if (!/^-?\d+(\.\d+)?$/.test(s)) return Symbol.for('bad') as never;
      return Number(s);
    }
    case 'graded':
      return /^\d+$/.test(s) ? Number(s) : (Symbol.for('bad') as never);
    case 'compared': {
      const v = s.toLowerCase().replace(/\s+/g, '_');
      return COMPARED_LEVELS.includes(v as ComparedLevel) ? v : (Symbol.for('bad') as never);
    }
    case 'pass_fail': {
      const v = s.toLowerCase();
      if (['pass', 'yes', 'true', 'ok'].includes(v)) return true;
      if (['fail', 'no', 'false'].includes(v)) return false;
      return Symbol.for('bad') as never;
    }
    default:
      return s;
  }
}

/** Lab-local date of a reading time: with an offset it is converted, without one it is taken as lab time. */
function localDateOf(readAt: string, timeZone: string): string | null {
  const s = readAt.trim();
  // A real calendar date in the app's range, and a real time of day.
  const real = (day: string, hh = '0', mm = '0', ss = '0') => isCalendarDate(day) && Number(hh) < 24 && Number(mm) < 60 && Number(ss) < 60;
  let m = /^(\d{4}-\d{2}-\d{2})(?:[ T](\d{2}):(\d{2})(?::(\d{2})(?:\.\d+)?)?)?$/.exec(s);
  if (m) return real(m[1], m[2], m[3], m[4]) ? m[1] : null;
  m = /^(\d{4}-\d{2}-\d{2})T(\d{2}):(\d{2})(?::(\d{2})(?:\.\d+)?)?(Z|[+-]\d{2}:?\d{2})$/.exec(s);
  if (m && real(m[1], m[2], m[3], m[4])) {
    const d = new Date(s);
    if (Number.isNaN(d.getTime())) return null;
    const day = localDateInZone(d, timeZone);
    return isCalendarDate(day) ? day : null;
  }
  return null;
}

/** Lines the preview shows, and problems it lists (the counts are always complete). */
export const PREVIEW_ROWS = 50;
export const PREVIEW_ERRORS = 200;

export interface ImportPlan {
  /** The first PREVIEW_ROWS lines. */
  rows: ImportPreviewRow[];
  /** Lines below the header. */
  totalRows: number;
  /** Every line's problem, in file order. */
  errors: { line: number; message: string }[];
  /** Entries grouped by sample code and checkpoint, ready for recording. */
  groups: Map<string, { code: string; checkpointId: number; entries: { studyAttributeId: number; value: number | string | boolean; method: Record<string, string> }[] }>;
  errorCount: number;
}

/** What POST /studies/:id/import/preview answers: the first lines, the counts, the first problems. */
export function previewOf(plan: ImportPlan): ImportPreview {
  return {
    rows: plan.rows,
    totalRows: plan.totalRows,
    okRows: plan.totalRows - plan.errorCount,
    errorCount: plan.errorCount,
    errors: plan.errors.slice(0, PREVIEW_ERRORS),
    moreErrors: Math.max(0, plan.errors.length - PREVIEW_ERRORS),
  };
}

export async function planImport(db: DbOrTx, labId: number, studyId: number, timeZone: string, csv: string): Promise<ImportPlan> {
  const [study] = await db.select().from(studies).where(and(eq(studies.labId, labId), eq(studies.id, studyId)));
  if (!study) throw notFound('No such study in your lab');
  if (study.status !== 'running') throw conflict(`Readings can be imported into a running study only; this one is ${study.status.replace('_', ' ')}`);

  let records: string[][];
  try {
    const delimiter = (csv.split('\n')[0] ?? '').includes(';') ? ';' : ',';
    records = parseCsv(csv, { delimiter, skip_empty_lines: true, relax_column_count: true, bom: true, trim: true });
  } catch (e) {
    throw new HttpError(400, 'validation', `The file is not readable CSV: ${(e as Error).message}`, { file: 'Not readable CSV' });
  }
  if (records.length < 2) throw new HttpError(400, 'validation', 'The file has no readings', { file: 'No readings below the header' });
  const header = records[0].map((h) => h.toLowerCase().trim());
  const col: Record<string, number> = {};
  for (const [key, names] of Object.entries(HEADERS)) {
    col[key] = header.findIndex((h) => names.includes(h));
    if (col[key] < 0) throw new HttpError(400, 'validation', `Line 1: no "${names[0]}" column`, { file: `Missing column: ${names[0]}` });
  }

  const sampleRows = await db.select().from(samples).where(eq(samples.studyId, studyId));
  const attrRows = await db
    .select({ sa: studyAttributes, a: attributes })
    .from(studyAttributes)
    .innerJoin(attributes, eq(attributes.id, studyAttributes.attributeId))
    .where(eq(studyAttributes.studyId, studyId));
  const cpRows = await db.select().from(checkpoints).where(and(eq(checkpoints.studyId, studyId), inArray(checkpoints.status, ['open', 'done'])));
  const existing = await db
    .select({ sampleId: observations.sampleId, checkpointId: observations.checkpointId, saId: observations.studyAttributeId })
    .from(observations)
    .where(and(eq(observations.labId, labId), eq(observations.studyId, studyId)));

  const rows: ImportPreviewRow[] = [];
  const errors: ImportPlan['errors'] = [];
  const groups: ImportPlan['groups'] = new Map();
  const seen = new Set<string>();
  const sampleByCode = new Map(sampleRows.map((s) => [s.code, s]));
  const attrByCode = new Map(attrRows.map((a) => [a.a.code, a]));
  const recorded = new Set(existing.map((e) => `${e.sampleId}:${e.checkpointId}:${e.saId}`));
  const windows = cpRows.map((cp) => ({ cp, from: addDays(cp.dueDate, -cp.windowBefore), to: addDays(cp.dueDate, cp.windowAfter), due: Date.parse(cp.dueDate) }));
  records.slice(1).forEach((rec, i) => {
    const line = i + 2;
    const get = (k: string) => (rec[col[k]] ?? '').trim();
    const row: ImportPreviewRow = {
      line,
      sampleCode: get('sample').toUpperCase(),
      attributeCode: get('attribute').toLowerCase(),
      value: get('value'),
      readAt: get('readAt'),
      checkpointLabel: null,
      evaluation: null,
      error: null,
    };
    if (rows.length < PREVIEW_ROWS) rows.push(row);
    const fail = (message: string) => {
      row.error = message;
      errors.push({ line, message });
    };
    const sample = sampleByCode.get(row.sampleCode);
    if (!sample) return fail(`Line ${line}: no sample ${row.sampleCode || '(empty)'} in this study`);
    const at = attrByCode.get(row.attributeCode);
    if (!at) return fail(`Line ${line}: attribute "${row.attributeCode}" is not part of this study`);
    const value = parseValue(at.a.kind, row.value);
    if (typeof value === 'symbol') return fail(`Line ${line}: "${row.value}" is not a valid ${at.a.name} value`);
    const day = localDateOf(row.readAt, timeZone);
    if (!day) return fail(`Line ${line}: time read "${row.readAt}" is not a date and time (use YYYY-MM-DD HH:mm)`);
    const dayMs = Date.parse(day);
    const cp = windows
      .filter((w) => w.cp.studyConditionId === sample.studyConditionId && w.from <= day && day <= w.to)
      .sort((a, b) => Math.abs(a.due - dayMs) - Math.abs(b.due - dayMs))[0]?.cp;
    if (!cp) return fail(`Line ${line}: no open checkpoint window for sample ${row.sampleCode} on ${day}`);
    row.checkpointLabel = cp.label;
    const key = `${sample.id}:${cp.id}:${at.sa.id}`;
    if (seen.has(key) || recorded.has(key)) return fail(`Line ${line}: ${at.a.name} of ${row.sampleCode} at ${cp.label} is already recorded`);
    seen.add(key);
    const gk = `${sample.code}:${cp.id}`;
    if (!groups.has(gk)) groups.set(gk, { code: sample.code, checkpointId: cp.id, entries: [] });
    groups.get(gk)!.entries.push({ studyAttributeId: at.sa.id, value, method: { readAt: row.readAt, source: 'import' } });
  });
  return { rows, totalRows: records.length - 1, errors, groups, errorCount: errors.length };
}

/** Imports every reading or none (one transaction through the recording path). */
export async function runImport(db: Db, who: Recorder, plan: ImportPlan, today: string): Promise<number> {
  if (plan.errorCount) {
    const listed = plan.errors.slice(0, PREVIEW_ERRORS);
    const more = plan.errorCount - listed.length;
    throw new HttpError(
      422,
      'unprocessable',
      `${plan.errorCount} line(s) have problems; nothing was imported${more ? ` (the first ${listed.length} are listed)` : ''}`,
      Object.fromEntries(listed.map((e) => [`line.${e.line}`, e.message])),
    );
  }
  let n = 0;
  await db.transaction(async (tx) => {
    for (const g of plan.groups.values()) {
      await recordObservations(tx as unknown as Db, who, g.code, g.checkpointId, g.entries, today, true);
      n += g.entries.length;
    }
  });
  return n;
}
