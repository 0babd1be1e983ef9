/**
 * The local fake SMTP service: listens on 127.0.0.1 (a free port), accepts
 * every message without delivering it, and stores it in MariaDB's
 * mail_outbox table, where tests and the development Outbox page read it.
 * Started by the app when no SMTP settings are given.
 */
import type { AddressInfo } from 'node:net';
import { simpleParser, type AddressObject, type ParsedMail } from 'mailparser';
import { SMTPServer } from 'smtp-server';
import type { Db } from '../db/client';
import { mailOutbox } from '../db/schema';
import type { Logger } from '../log';

/** Messages larger than this are refused (552), like a real service would. */
export const FAKE_SMTP_MAX_BYTES = 5 * 1024 * 1024;

export interface FakeSmtp {
  host: string;
  port: number;
  close(): Promise<void>;
}

const clip = (s: string, n: number) => (s.length > n ? s.slice(0, n) : s);

/** The stored fields of a captured message, read with mailparser. */
export interface CapturedMail {
  labHeader: string | null;
  subject: string;
  from: string;
  to: string;
  messageId: string | null;
  /** The text/plain part; null when the message has only HTML. */
  text: string | null;
  /** The text/html part as sent (cid: links kept). */
  html: string | null;
}

const addresses = (a: AddressObject | AddressObject[] | undefined) => (a ? (Array.isArray(a) ? a : [a]).map((x) => x.text).join(', ') : '');

export async function readCapturedMail(raw: Buffer): Promise<CapturedMail> {
  // No text made from HTML (or HTML from text), no links added, cid: links left alone.
  const mail: ParsedMail = await simpleParser(raw, { skipHtmlToText: true, skipTextToHtml: true, skipTextLinks: true, skipImageLinks: true, keepCidLinks: true });
  const lab = mail.headers.get('x-keepwell-lab');
  return {
    labHeader: typeof lab === 'string' ? lab.trim() : null,
    subject: mail.subject ?? '',
    from: addresses(mail.from),
    to: addresses(mail.to),
    messageId: mail.messageId?.trim() || null,
    text: mail.text || null,
    html: typeof mail.html === 'string' && mail.html ? mail.html : null,
  };
}

export async function startFakeSmtp(opts: { db: Db; log: Logger; port?: number }): Promise<FakeSmtp> {
  const { db, log } = opts;
  const server = new SMTPServer({
    name: 'keepwell-fake-smtp',
    banner: 'Keepwell local fake SMTP service: messages are kept, never delivered',
    authOptional: true,
    disabledCommands: ['AUTH', 'STARTTLS'],
    disableReverseLookup: true,
    size: FAKE_SMTP_MAX_BYTES,
    logger: false,
    closeTimeout: 2000,
    onData(stream, session, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (c: Buffer) => chunks.push(c));
      stream.on('error', (err) => callback(err));
      stream.on('end', () => {
        if (stream.sizeExceeded) {
          const err = Object.assign(new Error('Message too large for the fake SMTP service'), { responseCode: 552 });
          return callback(err);
        }
        const raw = Buffer.concat(chunks);
        (async () => {
          const mail = await readCapturedMail(raw);
          const labHeader = mail.labHeader;
          const labId = labHeader && /^[1-9][0-9]{0,15}$/.test(labHeader) ? Number(labHeader) : null;
          const envelopeTo = session.envelope.rcptTo.map((r) => r.address).join(', ');
          await db.insert(mailOutbox).values({
            labId,
            to: clip(mail.to || envelopeTo, 1000),
            from: clip(mail.from || (session.envelope.mailFrom ? session.envelope.mailFrom.address : ''), 300),
            subject: clip(mail.subject, 500),
            text: mail.text,
            html: mail.html,
            messageId: mail.messageId ? clip(mail.messageId, 300) : null,
            rawSize: raw.length,
          });
        })().then(
          () => callback(),
          (err) => {
            log.error('fake SMTP service could not store a message', err);
            callback(Object.assign(new Error('Could not store the message'), { responseCode: 451 }));
          },
        );
      });
    },
  });
  server.on('error', (err) => log.error('fake SMTP service error', err));
  await new Promise<void>((resolve, reject) => {
    server.server.once('error', reject);
    server.listen(opts.port ?? 0, '127.0.0.1', () => {
      server.server.off('error', reject);
      resolve();
    });
  });
  // Never keeps the process alive by itself.
  server.server.unref();
  const port = (server.server.address() as AddressInfo).port;
  let closed = false;
  return {
    host: '127.0.0.1',
    port,
    close() {
      if (closed) return Promise.resolve();
      closed = true;
      return new Promise<void>((resolve) => server.close(() => resolve()));
    },
  };
}
