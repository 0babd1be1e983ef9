/**
 * A small reader for the messages the fake SMTP service captures: headers
 * (with RFC 2047 encoded words), and the first text/plain and text/html parts
 * of a (possibly nested) multipart message, decoded from quoted-printable or
 * base64. Enough for what nodemailer writes; not a general MIME library.
 */

export interface ParsedMail {
  headers: Map<string, string>;
  subject: string;
  from: string;
  to: string;
  messageId: string | null;
  text: string | null;
  html: string | null;
}

interface Part {
  headers: Map<string, string>;
  body: Buffer;
}

function splitHeadBody(raw: Buffer): { head: string; body: Buffer } {
  const crlf = raw.indexOf('\r\n\r\n');
  const lf = raw.indexOf('\n\n');
  let at = -1;
  let sep = 0;
  if (crlf >= 0 && (lf < 0 || crlf <= lf)) {
    at = crlf;
    sep = 4;
  } else if (lf >= 0) {
    at = lf;
    sep = 2;
  }
  if (at < 0) return { head: raw.toString('utf8'), body: Buffer.alloc(0) };
  return { head: raw.subarray(0, at).toString('utf8'), body: raw.subarray(at + sep) };
}

function parseHeaders(head: string): Map<string, string> {
  const headers = new Map<string, string>();
  const unfolded = head.replace(/\r?\n[ \t]+/g, ' ');
  for (const line of unfolded.split(/\r?\n/)) {
    const i = line.indexOf(':');
    if (i <= 0) continue;
    const name = line.slice(0, i).trim().toLowerCase();
    if (!headers.has(name)) headers.set(name, line.slice(i + 1).trim());
  }
  return headers;
}

function parsePart(raw: Buffer): Part {
  const { head, body } = splitHeadBody(raw);
  return { headers: parseHeaders(head), body };
}

/** A header parameter, e.g. boundary or charset. */
function param(value: string | undefined, name: string): string | null {
  if (!value) return null;
  const m = new RegExp(`(?:^|;)\\s*${name}\\s*=\\s*(?:"([^"]*)"|([^;\\s]+))`, 'i').exec(value);
  return m ? (m[1] ?? m[2]) : null;
}

function decodeCharset(bytes: Buffer, charset: string | null): string {
  try {
    return new TextDecoder(charset ?? 'utf-8').decode(bytes);
  } catch {
    return new TextDecoder('utf-8').decode(bytes);
  }
}

export function decodeQuotedPrintable(input: string): Buffer {
  const soft = input.replace(/=\r?\n/g, '');
  const out: number[] = [];
  for (let i = 0; i < soft.length; i++) {
    const c = soft[i];
    if (c === '=' && /^[0-9A-Fa-f]{2}$/.test(soft.slice(i + 1, i + 3))) {
      out.push(parseInt(soft.slice(i + 1, i + 3), 16));
      i += 2;
    } else {
      out.push(soft.charCodeAt(i) & 0xff);
    }
  }
  return Buffer.from(out);
}

function decodeBody(part: Part): string {
  const encoding = (part.headers.get('content-transfer-encoding') ?? '7bit').toLowerCase();
  const charset = param(part.headers.get('content-type'), 'charset');
  let bytes: Buffer;
  if (encoding === 'base64') bytes = Buffer.from(part.body.toString('latin1').replace(/\s+/g, ''), 'base64');
  else if (encoding === 'quoted-printable') bytes = decodeQuotedPrintable(part.body.toString('latin1'));
  else bytes = part.body;
  return decodeCharset(bytes, charset).replace(/\r\n/g, '\n');
}

/** Decodes RFC 2047 encoded words (=?utf-8?Q?...?= and =?utf-8?B?...?=). */
export function decodeHeader(value: string): string {
  // Whitespace between two adjacent encoded words is not part of the text.
  const joined = value.replace(/(=\?[^?]+\?[QqBb]\?[^?]*\?=)\s+(?==\?)/g, '$1');
  return joined.replace(/=\?([^?]+)\?([QqBb])\?([^?]*)\?=/g, (_m, charset: string, enc: string, text: string) => {
    const bytes =
      enc.toUpperCase() === 'B' ? Buffer.from(text, 'base64') : decodeQuotedPrintable(text.replace(/_/g, ' '));
    return decodeCharset(bytes, charset);
  });
}

function collect(part: Part, found: { text: string | null; html: string | null }, depth = 0): void {
  if (depth > 8) return;
  const type = (part.headers.get('content-type') ?? 'text/plain').toLowerCase();
  const disposition = (part.headers.get('content-disposition') ?? '').toLowerCase();
  if (type.startsWith('multipart/')) {
    const boundary = param(part.headers.get('content-type'), 'boundary');
    if (!boundary) return;
    const body = part.body.toString('latin1');
    const pieces = body.split(new RegExp(`\\r?\\n?--${boundary.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}(?:--)?[ \\t]*\\r?\\n?`));
    // The first piece is the preamble, the last the epilogue.
    for (const piece of pieces.slice(1)) {
      if (!piece.trim()) continue;
      collect(parsePart(Buffer.from(piece, 'latin1')), found, depth + 1);
    }
    return;
  }
  if (disposition.startsWith('attachment')) return;
  if (type.startsWith('text/plain') && found.text === null) found.text = decodeBody(part);
  else if (type.startsWith('text/html') && found.html === null) found.html = decodeBody(part);
}

export function parseMail(raw: Buffer): ParsedMail {
  const root = parsePart(raw);
  const found = { text: null as string | null, html: null as string | null };
  collect(root, found);
  const h = (name: string) => decodeHeader(root.headers.get(name) ?? '');
  const messageId = root.headers.get('message-id')?.trim() || null;
  return { headers: root.headers, subject: h('subject'), from: h('from'), to: h('to'), messageId, text: found.text, html: found.html };
}
