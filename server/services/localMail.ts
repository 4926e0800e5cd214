import { SMTPServer } from 'smtp-server';
import type { AddressInfo } from 'node:net';
import type { Logger } from 'pino';
import type pg from 'pg';

/**
 * The local mail service: an SMTP server on 127.0.0.1 that stands in for a real one. It accepts
 * every message without authentication and keeps it in `mail_received` (sender, recipients,
 * subject, plain text), where the Outbox page and the tests read it back. `npm start` runs it
 * unless SMTP_URL points at a real server.
 */
export interface LocalMailService {
  /** smtp://127.0.0.1:<port>, for nodemailer. */
  url: string;
  port: number;
  close(): Promise<void>;
}

/** Largest message the local service accepts (attachments are never mailed). */
const MAX_MESSAGE_BYTES = 2 * 1024 * 1024;

export async function startLocalMail(
  pool: pg.Pool,
  opts: { port?: number; log?: Logger } = {},
): Promise<LocalMailService> {
  const server = new SMTPServer({
    secure: false,
    authOptional: true,
    disabledCommands: ['AUTH', 'STARTTLS'],
    size: MAX_MESSAGE_BYTES,
    banner: 'Driftbench local mail service',
    logger: false,
    onData(stream, session, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (c: Buffer) => chunks.push(c));
      stream.on('end', () => {
        if (stream.sizeExceeded) {
          const err = Object.assign(new Error('Message exceeds the local service size limit'), {
            responseCode: 552,
          });
          return callback(err);
        }
        const raw = Buffer.concat(chunks);
        const parsed = parseMessage(raw.toString('latin1'));
        const from = session.envelope.mailFrom ? session.envelope.mailFrom.address : null;
        const to = session.envelope.rcptTo.map((r) => r.address).join(', ');
        pool
          .query(
            'INSERT INTO mail_received (mail_from, rcpt_to, subject, body, message_id, size_bytes) VALUES ($1, $2, $3, $4, $5, $6)',
            [from, to, parsed.subject, parsed.text, parsed.messageId, raw.length],
          )
          .then(
            () => callback(),
            (err: Error) => {
              opts.log?.error({ err: err.message }, 'local mail service could not store a message');
              callback(
                Object.assign(new Error('Temporary storage failure'), { responseCode: 451 }),
              );
            },
          );
      });
      stream.on('error', (err: Error) => callback(err));
    },
  });
  server.on('error', (err: Error) =>
    opts.log?.warn({ err: err.message }, 'local mail service error'),
  );
  await new Promise<void>((resolve, reject) => {
    server.server.once('error', reject);
    server.listen(opts.port ?? 0, '127.0.0.1', () => resolve());
  });
  const port = (server.server.address() as AddressInfo).port;
  return {
    url: `smtp://127.0.0.1:${port}`,
    port,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}

export interface ParsedMessage {
  subject: string;
  text: string;
  messageId: string | null;
}

/**
 * Reads the subject and plain text out of a single-part or multipart message as nodemailer writes
 * them: headers unfolded, RFC 2047 encoded words in the subject, quoted-printable or base64 bodies.
 */
export function parseMessage(raw: string): ParsedMessage {
  const { headers, body } = splitHeaders(raw);
  const subject = decodeWords(headers.get('subject') ?? '');
  const messageId = headers.get('message-id') ?? null;
  return { subject, text: textOf(headers, body), messageId };
}

function splitHeaders(raw: string): { headers: Map<string, string>; body: string } {
  const m = /\r?\n\r?\n/.exec(raw);
  const head = m ? raw.slice(0, m.index) : raw;
  const body = m ? raw.slice(m.index + m[0].length) : '';
  const headers = new Map<string, string>();
  for (const line of head.replace(/\r?\n[ \t]+/g, ' ').split(/\r?\n/)) {
    const i = line.indexOf(':');
    if (i > 0) headers.set(line.slice(0, i).trim().toLowerCase(), line.slice(i + 1).trim());
  }
  return { headers, body };
}

function textOf(headers: Map<string, string>, body: string): string {
  const type = headers.get('content-type') ?? 'text/plain';
  const boundary = /boundary="?([^";]+)"?/i.exec(type)?.[1];
  if (/^multipart\//i.test(type) && boundary) {
    const parts = body.split(`--${boundary}`).slice(1);
    for (const part of parts) {
      if (part.startsWith('--')) break;
      const p = splitHeaders(part.replace(/^\r?\n/, ''));
      const t = p.headers.get('content-type') ?? 'text/plain';
      if (/^text\/plain/i.test(t) || /^multipart\//i.test(t)) return textOf(p.headers, p.body);
    }
    return '';
  }
  const charset = /charset="?([^";]+)"?/i.exec(type)?.[1]?.toLowerCase() ?? 'utf-8';
  const encoding = (headers.get('content-transfer-encoding') ?? '7bit').toLowerCase();
  let bytes: Buffer;
  if (encoding === 'base64') bytes = Buffer.from(body.replace(/\s+/g, ''), 'base64');
  else if (encoding === 'quoted-printable') bytes = decodeQuotedPrintable(body);
  else bytes = Buffer.from(body, 'latin1');
  return new TextDecoder(charset === 'us-ascii' ? 'utf-8' : charset)
    .decode(bytes)
    .replace(/\r\n/g, '\n')
    .replace(/\n$/, '');
}

function decodeQuotedPrintable(s: string): Buffer {
  const soft = s.replace(/=\r?\n/g, '');
  const out: number[] = [];
  for (let i = 0; i < soft.length; i++) {
    const c = soft[i];
    if (c === '=' && /^[0-9A-Fa-f]{2}$/.test(soft.slice(i + 1, i + 3))) {
      out.push(parseInt(soft.slice(i + 1, i + 3), 16));
      i += 2;
    } else out.push(soft.charCodeAt(i) & 0xff);
  }
  return Buffer.from(out);
}

/** RFC 2047: =?charset?B|Q?text?= words, adjacent words joined without the space between them. */
function decodeWords(s: string): string {
  const bytesToText = (bytes: Buffer) => new TextDecoder('utf-8').decode(bytes);
  const decoded = s.replace(/\?=\s+=\?/g, '?==?');
  return decoded.replace(
    /=\?([^?]+)\?([BbQq])\?([^?]*)\?=/g,
    (_all, _charset: string, enc: string, text: string) => {
      if (enc.toUpperCase() === 'B') return bytesToText(Buffer.from(text, 'base64'));
      return bytesToText(decodeQuotedPrintable(text.replace(/_/g, ' ')));
    },
  );
}
