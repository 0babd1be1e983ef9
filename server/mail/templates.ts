/**
 * E-mail templates: every message has a plain-text and an HTML part, names
 * the lab, and carries no tracking (no images, no remote resources, no
 * tracking parameters). The HTML uses tables and inline styles only, which
 * is what mail clients render reliably.
 *
 * `renderMail` is the building block for every message, including the
 * reminder digests (jobs/digests.ts): a title, then blocks of paragraphs,
 * link buttons, lists of items grouped under headings, and small print.
 */

export interface MailContent {
  subject: string;
  text: string;
  html: string;
}

export type MailBlock =
  | { kind: 'paragraph'; text: string }
  | { kind: 'button'; label: string; url: string }
  | {
      kind: 'list';
      heading?: string;
      /** Each item: a main text, an optional link and an optional note after a dash. */
      items: { text: string; url?: string; note?: string }[];
    }
  | { kind: 'note'; text: string };

export interface MailLayout {
  labName: string;
  subject: string;
  /** The first line shown by most mail clients in their list of messages. */
  preheader?: string;
  title: string;
  blocks: MailBlock[];
  /** Why the person receives this message (shown at the bottom). */
  footer: string;
}

const ACCENT = '#1d6a66';
const INK = '#1f2328';
const INK_2 = '#4b5563';
const INK_3 = '#6b7280';
const LINE = '#e4e7eb';
const FONT = "-apple-system, 'Segoe UI', Roboto, Helvetica, Arial, sans-serif";

export function escapeHtml(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

/** Only http(s) links go into a message. */
function safeUrl(url: string): string {
  if (!/^https?:\/\//i.test(url)) throw new Error(`refusing a non-http link in an e-mail: ${url}`);
  return url;
}

/** Wraps plain text at about 76 characters, keeping URLs whole. */
function wrap(text: string, width = 76, indent = ''): string {
  const out: string[] = [];
  for (const para of text.split('\n')) {
    let line = indent;
    for (const word of para.split(/\s+/).filter(Boolean)) {
      if (line.trim().length && line.length + 1 + word.length > width) {
        out.push(line);
        line = indent + word;
      } else line = line.trim().length ? `${line} ${word}` : indent + word;
    }
    out.push(line);
  }
  return out.join('\n');
}

function textBlock(b: MailBlock): string {
  switch (b.kind) {
    case 'paragraph':
      return wrap(b.text);
    case 'note':
      return wrap(b.text);
    case 'button':
      return `${b.label}:\n${safeUrl(b.url)}`;
    case 'list': {
      const lines: string[] = [];
      if (b.heading) lines.push(b.heading, '-'.repeat(Math.min(b.heading.length, 76)));
      for (const item of b.items) {
        const main = item.note ? `${item.text} - ${item.note}` : item.text;
        lines.push(wrap(main, 76, '  ').replace(/^ {2}/, '- '));
        if (item.url) lines.push(`  ${safeUrl(item.url)}`);
      }
      return lines.join('\n');
    }
  }
}

function htmlBlock(b: MailBlock): string {
  const p = `margin:0 0 16px;font:15px/1.55 ${FONT};color:${INK_2};`;
  switch (b.kind) {
    case 'paragraph':
      return `<p style="${p}">${escapeHtml(b.text)}</p>`;
    case 'note':
      return `<p style="margin:0 0 16px;font:13px/1.5 ${FONT};color:${INK_3};">${escapeHtml(b.text)}</p>`;
    case 'button':
      return (
        `<table role="presentation" cellpadding="0" cellspacing="0" border="0" style="margin:8px 0 24px;"><tr>` +
        `<td style="background:${ACCENT};border-radius:8px;">` +
        `<a href="${escapeHtml(safeUrl(b.url))}" style="display:inline-block;padding:13px 22px;font:600 15px/1.2 ${FONT};color:#ffffff;text-decoration:none;border-radius:8px;">${escapeHtml(b.label)}</a>` +
        `</td></tr></table>` +
        `<p style="margin:0 0 20px;font:13px/1.5 ${FONT};color:${INK_3};">If the button does not work, copy this address into your browser:<br>` +
        `<span style="word-break:break-all;color:${INK_2};">${escapeHtml(b.url)}</span></p>`
      );
    case 'list': {
      const head = b.heading
        ? `<h2 style="margin:20px 0 8px;font:600 15px/1.4 ${FONT};color:${INK};border-bottom:1px solid ${LINE};padding-bottom:6px;">${escapeHtml(b.heading)}</h2>`
        : '';
      const items = b.items
        .map((item) => {
          const main = item.url
            ? `<a href="${escapeHtml(safeUrl(item.url))}" style="color:${ACCENT};text-decoration:underline;">${escapeHtml(item.text)}</a>`
            : escapeHtml(item.text);
          const note = item.note ? ` <span style="color:${INK_3};">&ndash; ${escapeHtml(item.note)}</span>` : '';
          return `<li style="margin:0 0 6px;">${main}${note}</li>`;
        })
        .join('');
      return `${head}<ul style="margin:0 0 16px;padding-left:20px;font:15px/1.55 ${FONT};color:${INK_2};">${items}</ul>`;
    }
  }
}

export function renderMail(m: MailLayout): MailContent {
  const text = [
    m.labName,
    '',
    m.title,
    '='.repeat(Math.min(m.title.length, 76)),
    '',
    m.blocks.map(textBlock).join('\n\n'),
    '',
    '-- ',
    wrap(m.footer),
    'Keepwell, stability and shelf-life records for your lab.',
    '',
  ].join('\n');

  const preheader = m.preheader
    ? `<div style="display:none;max-height:0;overflow:hidden;mso-hide:all;">${escapeHtml(m.preheader)}</div>`
    : '';
  const html = `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="color-scheme" content="light">
<title>${escapeHtml(m.subject)}</title>
</head>
<body style="margin:0;padding:0;background:#f6f7f8;">
${preheader}
<table role="presentation" width="100%" cellpadding="0" cellspacing="0" border="0" style="background:#f6f7f8;">
<tr><td align="center" style="padding:32px 12px;">
<table role="presentation" width="100%" cellpadding="0" cellspacing="0" border="0" style="max-width:600px;">
<tr><td style="padding:0 4px 12px;font:600 14px/1.4 ${FONT};color:${ACCENT};letter-spacing:0.01em;">${escapeHtml(m.labName)}</td></tr>
<tr><td style="background:#ffffff;border:1px solid ${LINE};border-radius:10px;padding:28px 28px 12px;">
<h1 style="margin:0 0 18px;font:600 21px/1.3 ${FONT};color:${INK};">${escapeHtml(m.title)}</h1>
${m.blocks.map(htmlBlock).join('\n')}
</td></tr>
<tr><td style="padding:16px 4px 0;font:12px/1.5 ${FONT};color:${INK_3};">${escapeHtml(m.footer)}<br>Keepwell, stability and shelf-life records for your lab.</td></tr>
</table>
</td></tr>
</table>
</body>
</html>
`;
  return { subject: m.subject, text, html };
}

/** "5 Jan 2027, 09:00" in the lab's time zone. */
export function formatLabTime(at: Date, timeZone: string): string {
  return new Intl.DateTimeFormat('en-GB', { dateStyle: 'medium', timeStyle: 'short', timeZone, hourCycle: 'h23' }).format(at);
}

const ROLE_WORDS: Record<string, string> = { technician: 'a technician', formulator: 'a formulator', owner: 'an owner' };

export function invitationMail(p: {
  labName: string;
  timeZone: string;
  inviterName: string;
  role: string;
  url: string;
  expiresAt: Date;
}): MailContent {
  const subject = `${p.inviterName} invited you to ${p.labName} on Keepwell`;
  return renderMail({
    labName: p.labName,
    subject,
    preheader: `Join ${p.labName} as ${ROLE_WORDS[p.role] ?? p.role}. The link works once, for 72 hours.`,
    title: `Join ${p.labName} on Keepwell`,
    blocks: [
      {
        kind: 'paragraph',
        text: `${p.inviterName} invited you to join ${p.labName} as ${ROLE_WORDS[p.role] ?? p.role}. Keepwell is where the lab plans its stability studies and records every check.`,
      },
      { kind: 'paragraph', text: 'Open the link to choose the name your colleagues will see and your password.' },
      { kind: 'button', label: 'Accept the invitation', url: p.url },
      {
        kind: 'note',
        text: `The link works once and expires on ${formatLabTime(p.expiresAt, p.timeZone)} (${p.timeZone}), 72 hours after it was sent. If you did not expect this invitation, ignore this e-mail: nothing happens until the link is used.`,
      },
    ],
    footer: `You receive this e-mail because an owner of ${p.labName} entered your address in Keepwell.`,
  });
}

/**
 * An invitation to an address that already has an account (in another lab): the person is told, the
 * inviting owner is not (the invitation looks sent either way, so addresses cannot be probed).
 */
export function invitationToExistingAccountMail(p: { labName: string; inviterName: string; ownLabName: string }): MailContent {
  const subject = `${p.inviterName} tried to invite you to ${p.labName} on Keepwell`;
  return renderMail({
    labName: p.labName,
    subject,
    preheader: 'Your address already has a Keepwell account, so the invitation could not be used.',
    title: `An invitation to ${p.labName}`,
    blocks: [
      {
        kind: 'paragraph',
        text: `${p.inviterName} invited this address to join ${p.labName} on Keepwell. This address already has a Keepwell account, at ${p.ownLabName}, and one address belongs to one lab, so there is no link to accept.`,
      },
      {
        kind: 'paragraph',
        text: `If you want to work with ${p.labName}, ask ${p.inviterName} to invite another address of yours. Your account at ${p.ownLabName} is unchanged.`,
      },
      { kind: 'note', text: 'If you did not expect this, ignore this e-mail: nothing has changed.' },
    ],
    footer: `You receive this e-mail because an owner of ${p.labName} entered your address in Keepwell.`,
  });
}

export function passwordResetMail(p: { labName: string; name: string; url: string }): MailContent {
  const subject = `Reset your Keepwell password (${p.labName})`;
  return renderMail({
    labName: p.labName,
    subject,
    preheader: 'The link works once, for one hour.',
    title: 'Choose a new password',
    blocks: [
      { kind: 'paragraph', text: `Hello ${p.name}, someone asked to reset the password of your Keepwell account at ${p.labName}. If it was you, open the link and choose a new password.` },
      { kind: 'button', label: 'Choose a new password', url: p.url },
      {
        kind: 'note',
        text: 'The link works once and expires one hour after it was sent. If you did not ask for this, ignore this e-mail: your password stays as it is.',
      },
    ],
    footer: `You receive this e-mail because a password reset was asked for your account at ${p.labName}.`,
  });
}
