/**
 * Seeded generation of bad requests, shared by the fuzz test (tests/api/fuzz.test.ts) and
 * `npm run fuzz` (tests/fuzz/run.ts). Nothing here depends on the answers, so one seed always
 * gives the same requests.
 *
 * Bodies start from templates: a plausible value for every object schema exported by
 * shared/schemas/*.ts (found at run time, so a new schema is used without editing this file),
 * matched to routes by what each route answers to a probe (tests/fuzz/harness.ts). A template is
 * then broken: a field gets a wrong type, an unpaired surrogate, a huge string, an impossible date,
 * a nested object, null, an unknown field... Routes without a template get bodies built from the
 * field names of every schema, raw JSON text and multipart uploads.
 */
import { readdirSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import type { z } from 'zod';
import type { RouteInfo } from './routes';

// ---------------------------------------------------------------- seeded random numbers

/** mulberry32: a small, fast 32-bit generator; the same seed gives the same sequence. */
export class Rng {
  private s: number;
  constructor(seed: number) {
    this.s = seed >>> 0;
  }
  next(): number {
    this.s = (this.s + 0x6d2b79f5) >>> 0;
    let t = this.s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  }
  int(n: number): number {
    return Math.floor(this.next() * n);
  }
  chance(p: number): boolean {
    return this.next() < p;
  }
  pick<T>(list: readonly T[]): T {
    return list[this.int(list.length)];
  }
  /** A sub-generator, so that one request's draws do not shift the next request's. */
  fork(salt: number): Rng {
    return new Rng((Math.imul(this.s ^ salt, 0x9e3779b1) + salt) >>> 0);
  }
}

// ---------------------------------------------------------------- bad values

export const SURROGATE_TEXT = ['x\ud800y', '\udc00', 'Cream \ud83d', '\ud83d\ude00 ok \udfff', 'a\udbffb\ud800'] as const;
const CONTROL_TEXT = ['a\u0000b', '\u0007bell', 'esc\u001b[31m', 'del\u007f', 'nul\u0000'];
export const IMPOSSIBLE_DATES = [
  '2026-02-30',
  '2026-13-01',
  '0000-00-00',
  '9999-12-31',
  '2025-02-29',
  '2026-04-31',
  '1899-12-31',
  '2200-01-01',
  '0001-01-01',
  '10000-01-01',
  '+275760-09-13',
  '-000001-01-01',
  '2026-1-1',
  '2026-00-10',
  '2026-02-30T10:00',
  '2026-03-25T25:00',
  '2026-03-25T10:61:00Z',
  '9999-12-31T23:59:59Z',
  '0000-01-01T00:00:00+14:00',
] as const;
const ODD_STRINGS = [
  '',
  ' ',
  '\t\n',
  'null',
  'undefined',
  'NaN',
  'true',
  '[object Object]',
  '__proto__',
  'constructor',
  "' OR 1=1 --",
  '"; drop table x; --',
  '<script>alert(1)</script>',
  '../../etc/passwd',
  '%00',
  '%s%s%n',
  '\u202eevil',
  'ｆｕｌｌｗｉｄｔｈ',
  '😀😀😀',
  'e\u0301\u0301\u0301',
  '1e400',
  '-0',
  '0x1f',
  '  42  ',
];
const BAD_NUMBERS = [
  -1,
  0,
  -0,
  0.5,
  1.5,
  -2147483649,
  2147483648,
  4294967296,
  9007199254740993,
  1e21,
  1e308,
  -1e308,
  5e-324,
  123456789.123456789,
  99999999999,
] as const;
const NUMBERISH_STRINGS = ['NaN', 'Infinity', '-Infinity', '1e400', '-1', '0', '1.5', '99999999999999999999', '0x10', '1_000', ' 7 ', '7abc'];

function word(rng: Rng, n = 1 + rng.int(10)): string {
  let s = '';
  for (let i = 0; i < n; i++) s += 'abcdefghijklmnopqrstuvwxyz'[rng.int(26)];
  return s;
}

function hugeString(rng: Rng): string {
  const n = rng.pick([256, 4_097, 65_536, 200_000]);
  return rng.pick(['x', 'é', '😀', 'ab ']).repeat(Math.ceil(n / 2));
}

export function badString(rng: Rng): string {
  switch (rng.int(7)) {
    case 0:
      return rng.pick(SURROGATE_TEXT);
    case 1:
      return rng.pick(CONTROL_TEXT);
    case 2:
      return rng.pick(IMPOSSIBLE_DATES);
    case 3:
      return hugeString(rng);
    case 4:
      return rng.pick(NUMBERISH_STRINGS);
    default:
      return rng.pick(ODD_STRINGS);
  }
}

/** Any JSON value that a schema should refuse somewhere. */
export function badValue(rng: Rng, depth = 0): unknown {
  const k = rng.int(depth > 2 ? 6 : 9);
  switch (k) {
    case 0:
      return null;
    case 1:
      return rng.chance(0.5);
    case 2:
      return rng.pick(BAD_NUMBERS);
    case 3:
    case 4:
    case 5:
      return badString(rng);
    case 6: {
      const n = rng.pick([0, 1, 3, 1000]);
      return Array.from({ length: n }, () => (n > 10 ? rng.int(5) : badValue(rng, depth + 1)));
    }
    case 7: {
      const o: Record<string, unknown> = {};
      for (let i = rng.int(4); i >= 0; i--) o[rng.chance(0.2) ? rng.pick(['__proto__', 'constructor', '']) : word(rng)] = badValue(rng, depth + 1);
      return o;
    }
    default: {
      // Deep nesting.
      let v: unknown = 1;
      for (let i = rng.pick([10, 200, 2000]); i > 0; i--) v = rng.chance(0.5) ? [v] : { a: v };
      return v;
    }
  }
}

// ---------------------------------------------------------------- templates from the shared schemas

type Schema = z.ZodType;
interface Def {
  type: string;
  innerType?: Schema;
  in?: Schema;
  out?: Schema;
  shape?: Record<string, Schema>;
  options?: Schema[];
  element?: Schema;
  values?: unknown[];
  entries?: Record<string, unknown>;
  valueType?: Schema;
}
const defOf = (s: Schema) => (s as unknown as { _zod: { def: Def } })._zod.def;
const isSchema = (x: unknown): x is Schema => !!x && typeof x === 'object' && '_zod' in x && 'safeParse' in x;

/** The schema under optional/nullable/default/pipe wrappers. */
function core(s: Schema): Schema {
  for (let i = 0; i < 20; i++) {
    const d = defOf(s);
    if (d.innerType) s = d.innerType;
    else if (d.type === 'pipe' && d.in) s = defOf(d.in).type === 'transform' && d.out ? d.out : d.in;
    else return s;
  }
  return s;
}

const STRING_CANDIDATES = [
  'Abc12',
  'Sample text',
  'A sample text long enough for a summary',
  '2026-03-02',
  'someone@example.com',
  'Europe/Berlin',
  'ph',
  'A',
  'No change',
  'Correct horse battery 42',
];
const NUMBER_CANDIDATES = [1, 2, 5, 10, 25, 50, 100, 0, 0.5, 1000, 9];

/** A value the field schema accepts where an easy one exists (the first candidate that passes). */
function example(field: Schema, depth = 0): unknown {
  const c = core(field);
  const d = defOf(c);
  const ok = (v: unknown) => field.safeParse(v).success;
  switch (d.type) {
    case 'string':
      return STRING_CANDIDATES.find(ok) ?? 'Abc12';
    case 'number':
    case 'int':
      return NUMBER_CANDIDATES.find(ok) ?? 1;
    case 'boolean':
      return true;
    case 'literal':
      return d.values?.[0];
    case 'enum':
      return Object.values(d.entries ?? {})[0];
    case 'null':
      return null;
    case 'array': {
      if (depth > 4 || !d.element) return [];
      for (const n of [1, 2, 3]) {
        const arr = Array.from({ length: n }, () => example(d.element!, depth + 1));
        if (ok(arr)) return arr;
      }
      return [example(d.element, depth + 1)];
    }
    case 'object': {
      const o: Record<string, unknown> = {};
      if (depth > 4) return o;
      for (const [k, v] of Object.entries(d.shape ?? {})) {
        const x = example(v, depth + 1);
        if (x !== undefined) o[k] = x;
      }
      return o;
    }
    case 'union': {
      for (const option of d.options ?? []) {
        const x = example(option, depth + 1);
        if (ok(x)) return x;
      }
      return d.options?.length ? example(d.options[0], depth + 1) : null;
    }
    case 'record':
      return d.valueType ? { key: example(d.valueType, depth + 1) } : {};
    default:
      return undefined;
  }
}

export interface Template {
  /** "studies.studyPlanInput", "studies.amendmentInput#2" */
  name: string;
  schema: Schema;
  value: Record<string, unknown>;
  keys: Set<string>;
  required: Set<string>;
  /** Has a field named like a password: bodies it accepts are never sent (no wrong-password attempts). */
  hasPassword: boolean;
}

function objectTemplate(name: string, s: Schema, whole: Schema): Template | null {
  const c = core(s);
  const d = defOf(c);
  if (d.type !== 'object' || !d.shape) return null;
  const value = example(c) as Record<string, unknown>;
  const keys = new Set(Object.keys(d.shape));
  const required = new Set([...keys].filter((k) => !d.shape![k].safeParse(undefined).success));
  return { name, schema: whole, value, keys, required, hasPassword: [...keys].some((k) => /password/i.test(k)) };
}

/** Every object (or union of objects) schema exported by shared/schemas/*.ts, as a template. */
export async function loadTemplates(): Promise<Template[]> {
  const dir = fileURLToPath(new URL('../../shared/schemas/', import.meta.url));
  const out: Template[] = [];
  for (const file of readdirSync(dir).filter((f) => f.endsWith('.ts')).sort()) {
    const mod = (await import(pathToFileURL(join(dir, file)).href)) as Record<string, unknown>;
    const area = file.replace(/\.ts$/, '');
    for (const [name, s] of Object.entries(mod).sort(([a], [b]) => a.localeCompare(b))) {
      if (!isSchema(s)) continue;
      const d = defOf(core(s));
      if (d.type === 'union' && d.options) {
        d.options.forEach((o, i) => {
          const t = objectTemplate(`${area}.${name}#${i}`, o, o);
          if (t) out.push(t);
        });
      } else {
        const t = objectTemplate(`${area}.${name}`, s, s);
        if (t) out.push(t);
      }
    }
  }
  return out;
}

// ---------------------------------------------------------------- breaking a template

type Path = (string | number)[];

function pathsOf(v: unknown, path: Path = [], out: Path[] = [], depth = 0): Path[] {
  out.push(path);
  if (depth > 6 || v === null || typeof v !== 'object') return out;
  if (Array.isArray(v)) v.forEach((x, i) => pathsOf(x, [...path, i], out, depth + 1));
  else for (const [k, x] of Object.entries(v)) pathsOf(x, [...path, k], out, depth + 1);
  return out;
}

function getAt(v: unknown, path: Path): unknown {
  return path.reduce<unknown>((o, k) => (o as Record<string | number, unknown>)?.[k], v);
}

function setAt(root: unknown, path: Path, value: unknown, remove = false): unknown {
  if (!path.length) return value;
  const parent = getAt(root, path.slice(0, -1)) as Record<string | number, unknown>;
  const key = path[path.length - 1];
  if (remove) {
    if (Array.isArray(parent)) parent.splice(Number(key), 1);
    else delete parent[key];
  } else parent[key] = value;
  return root;
}

/** One change that should make the value invalid (or at least odd). */
function breakOnce(rng: Rng, root: unknown, vocabulary: string[]): { value: unknown; what: string } {
  const paths = pathsOf(root);
  const leafy = paths.filter((p) => p.length > 0);
  const path = leafy.length && rng.chance(0.9) ? rng.pick(leafy) : [];
  const here = getAt(root, path);
  const where = path.join('.') || '(body)';
  const op = rng.int(10);
  if (typeof here === 'string' && op < 4) {
    // Keep the field plausible and add the one bad thing: the case zod alone let through.
    const bad = rng.pick([...SURROGATE_TEXT, ...CONTROL_TEXT]);
    return { value: setAt(root, path, rng.chance(0.5) ? `${here}${bad}` : bad), what: `text with bad characters at ${where}` };
  }
  if (typeof here === 'string' && /^\d{4}-\d{2}-\d{2}/.test(here) && op < 7) {
    return { value: setAt(root, path, rng.pick(IMPOSSIBLE_DATES)), what: `impossible date at ${where}` };
  }
  if (typeof here === 'number' && op < 5) {
    return { value: setAt(root, path, rng.chance(0.7) ? rng.pick(BAD_NUMBERS) : rng.pick(NUMBERISH_STRINGS)), what: `bad number at ${where}` };
  }
  if (op === 5 && here && typeof here === 'object' && !Array.isArray(here)) {
    const key = rng.chance(0.6) && vocabulary.length ? rng.pick(vocabulary) : word(rng);
    (here as Record<string, unknown>)[key] = badValue(rng);
    return { value: root, what: `extra field ${key} at ${where}` };
  }
  if (op === 6 && path.length) return { value: setAt(root, path, undefined, true), what: `missing ${where}` };
  return { value: setAt(root, path, badValue(rng)), what: `bad value at ${where}` };
}

export function breakValue(rng: Rng, value: unknown, vocabulary: string[]): { value: unknown; what: string[] } {
  let v = structuredClone(value);
  const what: string[] = [];
  for (let n = rng.chance(0.7) ? 1 : 1 + rng.int(3); n > 0; n--) {
    const r = breakOnce(rng, v, vocabulary);
    v = r.value;
    what.push(r.what);
  }
  return { value: v, what };
}

// ---------------------------------------------------------------- requests

export type FuzzRole = 'owner' | 'formulator' | 'technician' | 'signed-out';
export const ROLES: FuzzRole[] = ['owner', 'formulator', 'technician', 'signed-out'];

export type FuzzBody =
  | { kind: 'json'; value: unknown }
  | { kind: 'raw'; contentType: string; text: string | Buffer }
  | { kind: 'multipart'; fields: [string, string][]; files: { field: string; name: string; type: string; content: Buffer }[] };

export interface FuzzRequest {
  n: number;
  role: FuzzRole;
  route: RouteInfo;
  method: RouteInfo['method'];
  /** Path and query as sent. */
  url: string;
  headers: Record<string, string>;
  body?: FuzzBody;
  /** What was broken, for the failure report. */
  what: string[];
}

/** Ids and codes to put in paths: the member's own lab's, the other lab's, per table. */
export interface IdPools {
  own: Map<string, (number | string)[]>;
  other: Map<string, (number | string)[]>;
  /** Ids of the members who fuzz: never put in /members/:id (changing them would end the fuzzing sessions). */
  fuzzingMembers: number[];
}

export interface GeneratorInput {
  routes: RouteInfo[];
  templates: Template[];
  /** Templates matched to each route ("POST /api/products"), by the probe. */
  routeTemplates: Map<string, Template[]>;
  ids: IdPools;
  seed: number;
}

export const routeKey = (r: RouteInfo) => `${r.method} ${r.path}`;

/** Requests a role may send to a route: sign-in and sign-out go out signed out only, so no fuzzing session ends. */
export function allowed(route: RouteInfo, role: FuzzRole): boolean {
  if (route.method !== 'GET' && /^\/api\/auth\//.test(route.path) && role !== 'signed-out') return false;
  return true;
}

const ALIASES: Record<string, string> = { members: 'users', investigations: 'oos_investigations' };

/** The table a path parameter points into: the nearest resource segment before it. */
export function tableFor(path: string, param: string): string | null {
  const segs = path.split('/').filter(Boolean);
  const at = segs.indexOf(`:${param}`);
  for (let i = at - 1; i >= 0; i--) {
    if (segs[i].startsWith(':')) continue;
    const name = segs[i].replace(/-/g, '_');
    return ALIASES[name] ?? name;
  }
  return null;
}

const BAD_PARAMS = [
  '0',
  '-1',
  '-0',
  '1.5',
  '1e3',
  '0x10',
  '00001',
  '9007199254740993',
  '99999999999999999999999999',
  '2147483648',
  'abc',
  'null',
  'undefined',
  'NaN',
  '%20',
  '%00',
  '%zz',
  '%',
  '%ED%A0%80',
  '%C0%AF',
  '..%2F..%2Fetc',
  '%F0%9F%98%80',
  'x'.repeat(2000),
  "1'%20OR%20'1'='1",
  '1;DROP',
  '%E2%80%AE1',
];

const QUERY_KEYS = [
  'from',
  'to',
  'today',
  'days',
  'page',
  'studyId',
  'userId',
  'productId',
  'status',
  'q10',
  'resolution',
  'batchGrams',
  'containers',
  'fillGrams',
  'fillOunces',
  'overagePercent',
  'limit',
  'offset',
  'sort',
];

function queryValue(rng: Rng, ids: IdPools): string {
  switch (rng.int(8)) {
    case 0:
    case 1:
      return encodeURIComponent(rng.pick(IMPOSSIBLE_DATES));
    case 2:
      return encodeURIComponent(String(rng.pick(BAD_NUMBERS)));
    case 3:
      return rng.pick(BAD_PARAMS);
    case 4: {
      const other = [...ids.other.values()].flat();
      return other.length ? String(rng.pick(other)) : '1';
    }
    case 5:
      return encodeURIComponent(rng.pick(NUMBERISH_STRINGS));
    case 6:
      return rng.pick(['2026-03-02', '2026-03-02T10:00', '2026-03-02T10:00:00Z', '1', '7', 'full', 'chart', 'running']);
    default:
      return encodeURIComponent(rng.pick(ODD_STRINGS).slice(0, 100));
  }
}

function queryString(rng: Rng, ids: IdPools, get: boolean): string {
  if (rng.chance(get ? 0.25 : 0.75)) return '';
  const parts: string[] = [];
  for (let n = 1 + rng.int(3); n > 0; n--) {
    const key = rng.chance(0.85) ? rng.pick(QUERY_KEYS) : rng.pick([word(rng), 'a[b]', 'a%5B%5D', '__proto__', '%zz', '']);
    parts.push(`${key}=${queryValue(rng, ids)}`);
    if (rng.chance(0.1)) parts.push(`${key}=${queryValue(rng, ids)}`); // a repeated key arrives as an array
  }
  if (rng.chance(0.05)) parts.push(rng.pick(['=', '&&', 'novalue', '%']));
  return `?${parts.join('&')}`;
}

function paramValue(rng: Rng, route: RouteInfo, param: string, ids: IdPools): { text: string; what: string } {
  const table = param === 'code' ? 'samples.code' : tableFor(route.path, param);
  const own = (table && ids.own.get(table)) || [];
  const other = (table && ids.other.get(table)) || [...ids.other.values()].flat();
  const usable = table === 'users' ? own.filter((id) => !ids.fuzzingMembers.includes(Number(id))) : own;
  // Own ids let a body or query reach its schema; a GET with an own id is mostly a valid read, and a
  // rendered PDF takes seconds, so those get fewer.
  const ownShare = route.method !== 'GET' ? 0.4 : /\.pdf$/.test(route.path) ? 0.03 : 0.2;
  const r = rng.next();
  if (r < ownShare && usable.length) return { text: encodeURIComponent(String(rng.pick(usable))), what: `own ${param}` };
  if (r < ownShare + 0.2 && other.length) return { text: encodeURIComponent(String(rng.pick(other))), what: `other lab's ${param}` };
  if (r < ownShare + 0.25) return { text: String(100_000 + rng.int(1_000_000)), what: `unknown ${param}` };
  const bad = rng.pick(BAD_PARAMS);
  return { text: bad, what: `bad ${param} ${bad.slice(0, 40)}` };
}

// ---------------------------------------------------------------- multipart contents

const CSV_HEADERS = ['Timestamp,Temp (°C),RH (%)', 'Date/Time;Temperature °F;Humidity', 'sample,attribute,value,time read', 'Date,Time,Celsius(°C)', 'a,b,c'];

function csvText(rng: Rng): string {
  const lines: string[] = [];
  if (rng.chance(0.4)) {
    for (let i = rng.int(4); i >= 0; i--) lines.push(rng.pick(['Logger "EL-USB', '"Serial: 12"34', 'Model: "x', 'Title,"unclosed', 'Exported by logger', 'a"b"c']));
  }
  lines.push(rng.pick(CSV_HEADERS));
  const years = ['2026', '0001', '1899', '2200', '10000', '9999', '0000', '1900', '2199'];
  for (let i = 1 + rng.int(6); i > 0; i--) {
    const y = rng.pick(years);
    switch (rng.int(6)) {
      case 0:
        lines.push(`${y}-03-25 14:0${i % 10},21.5,45`);
        break;
      case 1:
        lines.push(`25/03/${y} 14:00;70,1;50`);
        break;
      case 2:
        lines.push(`${y}-02-30T10:00:00Z,21,40`);
        break;
      case 3:
        lines.push(`ABC${i},ph,${rng.pick(['5.4', 'abc', '1e400', '', '"x""y"'])},${y}-03-25 09:30`);
        break;
      case 4:
        lines.push(`${y}-03-25,10:00,${rng.pick(['20', '-999', 'NaN', '1e400'])}`);
        break;
      default:
        lines.push(rng.pick(['"a,b', 'x,"y"z,1', ',,,', '\u0000,1,2', `${y}-03-25 14:00:00+99:00,20,50`]));
    }
  }
  return lines.join(rng.pick(['\n', '\r\n', '\r']));
}

function fileContent(rng: Rng): { content: Buffer; type: string; name: string } {
  switch (rng.int(6)) {
    case 0:
      return { content: Buffer.alloc(0), type: 'text/csv', name: 'empty.csv' };
    case 1:
      return { content: Buffer.from([0xff, 0xd8, 0xff, 0xe0, 0, 0x10, 1, 2, 3]), type: 'image/jpeg', name: 'photo.jpg' };
    case 2:
      return { content: Buffer.from(Array.from({ length: 300 }, () => rng.int(256))), type: 'application/octet-stream', name: 'noise.bin' };
    case 3:
      return { content: Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 0]), type: 'image/png', name: '../../x.png' };
    default:
      return { content: Buffer.from(csvText(rng), 'utf8'), type: rng.pick(['text/csv', 'text/plain', 'application/json']), name: rng.pick(['log.csv', 'readings.csv', '\u202egpj.csv', 'a'.repeat(300)]) };
  }
}

function multipartBody(rng: Rng): FuzzBody {
  const field = rng.pick(['file', 'photos', 'photo', 'upload', 'files[]', word(rng)]);
  const files: { field: string; name: string; type: string; content: Buffer }[] = [];
  for (let n = rng.pick([0, 1, 1, 1, 2, 7]); n > 0; n--) files.push({ field, ...fileContent(rng) });
  const fields: [string, string][] = [];
  for (let n = rng.int(3); n > 0; n--) {
    fields.push([rng.pick(['unit', 'dateOrder', 'caption', word(rng)]), rng.pick(['C', 'F', 'K', 'DMY', 'MDY', 'YMD', '', 'x'.repeat(2000)])]);
  }
  return { kind: 'multipart', fields, files };
}

// ---------------------------------------------------------------- one request

const RAW_JSON = ['{', '[', '{"a":1e400}', '1e400', 'null', '"text"', '[]', '{"a":1,"a":2}', '{"__proto__":{"x":1}}', '\ufeff{}', '{"a":"\\ud800"}', '[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[1]]]]]]]]]]]]]]]]]]]]]]]]]]]]]', ''];

function bodyFor(rng: Rng, input: GeneratorInput, route: RouteInfo, vocabulary: string[]): { body?: FuzzBody; what: string[] } {
  const templates = input.routeTemplates.get(routeKey(route)) ?? [];
  const r = rng.next();
  if (templates.length && r < 0.65) {
    const t = rng.pick(templates);
    if (rng.chance(0.04)) return { body: { kind: 'json', value: structuredClone(t.value) }, what: [`template ${t.name} unchanged`] };
    const b = breakValue(rng, t.value, vocabulary);
    return { body: { kind: 'json', value: b.value }, what: [`template ${t.name}`, ...b.what] };
  }
  if (r < 0.75 && route.method !== 'GET') return { body: multipartBody(rng), what: ['multipart'] };
  if (r < 0.85) {
    if (rng.chance(0.3)) {
      const type = rng.pick(['text/plain', 'application/x-www-form-urlencoded', 'application/json; charset=utf-16', 'application/xml', 'application/json; charset=latin1']);
      return { body: { kind: 'raw', contentType: type, text: rng.chance(0.5) ? 'a=1&b=2' : '{"name":"x"}' }, what: [`content type ${type}`] };
    }
    const text = rng.chance(0.1) ? `{"a":"${'x'.repeat(300 * 1024)}"}` : rng.pick(RAW_JSON);
    return { body: { kind: 'raw', contentType: 'application/json', text }, what: [`raw JSON ${text.slice(0, 30)}`] };
  }
  // An object of known field names with bad values, or a bad value as the whole body.
  if (rng.chance(0.8)) {
    const o: Record<string, unknown> = {};
    for (let n = 1 + rng.int(4); n > 0; n--) o[rng.pick(vocabulary)] = badValue(rng);
    return { body: { kind: 'json', value: o }, what: ['known field names, bad values'] };
  }
  return { body: { kind: 'json', value: badValue(rng) }, what: ['bad value as the body'] };
}

/** Builds request `n` of a run: the same input and seed always give the same request. */
export function makeRequest(input: GeneratorInput, n: number, combos: { route: RouteInfo; role: FuzzRole }[], vocabulary: string[]): FuzzRequest {
  const rng = new Rng(input.seed).fork(n + 1);
  const { route, role } = combos[n % combos.length];
  const what: string[] = [];
  let path = route.path;
  for (const m of route.path.matchAll(/:([A-Za-z_]+)/g)) {
    const v = paramValue(rng, route, m[1], input.ids);
    path = path.replace(`:${m[1]}`, v.text);
    what.push(v.what);
  }
  const url = path + queryString(rng, input.ids, route.method === 'GET');
  const headers: Record<string, string> = {};
  if (route.method !== 'GET' && !rng.chance(0.03)) headers['X-Keepwell-Request'] = '1';
  if (rng.chance(0.02)) headers.Origin = 'https://evil.example';
  let body: FuzzBody | undefined;
  if (route.method !== 'GET' || rng.chance(0.05)) {
    const b = bodyFor(rng, input, route, vocabulary);
    body = b.body;
    what.push(...b.what);
  }
  return { n, role, route, method: route.method, url, headers, body, what };
}

/** Every field name of every template: the keys of "known field names" bodies. */
export function vocabularyOf(templates: Template[]): string[] {
  return [...new Set(templates.flatMap((t) => [...t.keys]))].sort();
}
