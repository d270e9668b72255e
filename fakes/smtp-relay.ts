// A local stand-in for the SMTP relay: speaks ESMTP on loopback, takes every well-formed message
// and keeps it in MAILBOX_DIR as {id}.eml plus a small {id}.json index entry for Mailbox.
// Run with `npx tsx fakes/smtp-relay.ts` (the launcher starts it beside the web server).
import { randomBytes } from 'node:crypto';
import fs from 'node:fs/promises';
import path from 'node:path';
import process from 'node:process';
import { fileURLToPath } from 'node:url';
import { SMTPServer, type SMTPServerAddress, type SMTPServerDataStream, type SMTPServerSession } from 'smtp-server';
import { simpleParser } from 'mailparser';
import { mailboxId, type MailboxEntry } from '../src/lib/server/mail/mailbox';

export interface RelayOptions {
  port: number;
  /** Loopback only; default 127.0.0.1. */
  host?: string;
  /** Folder for the .eml files and their index entries. */
  dir: string;
  /** When set, AUTH is required and must match; when unset any AUTH (or none) is accepted. */
  user?: string;
  pass?: string;
  /** Largest message accepted, in bytes (SIZE extension); default 10 MiB. */
  sizeLimit?: number;
  log?: (line: string) => void;
}

export interface Relay {
  port: number;
  close(): Promise<void>;
}

class SmtpReply extends Error {
  constructor(
    readonly responseCode: number,
    message: string,
  ) {
    super(message);
  }
}

// A deliberately plain check (RFC 5321 §4.1.2 Mailbox = Local-part "@" Domain): no spaces, one
// "@", a dotted or bracketed domain. The relay's job is to refuse what no relay would take.
const MAILBOX = /^[^\s@<>()[\]\\,;:"]+@(?:[A-Za-z0-9](?:[A-Za-z0-9-]*[A-Za-z0-9])?(?:\.[A-Za-z0-9](?:[A-Za-z0-9-]*[A-Za-z0-9])?)*|\[[0-9.:A-Fa-f]+\])$/;

/** Write a file so that readers see all of it or none of it: temp file, fsync, rename. */
async function writeAtomically(file: string, data: Buffer | string): Promise<void> {
  const tmp = `${file}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`;
  const fh = await fs.open(tmp, 'wx', 0o640);
  try {
    await fh.writeFile(data);
    await fh.sync();
  } finally {
    await fh.close();
  }
  await fs.rename(tmp, file);
}

async function syncDir(dir: string): Promise<void> {
  const fh = await fs.open(dir, 'r');
  try {
    await fh.sync();
  } finally {
    await fh.close();
  }
}

function collect(stream: SMTPServerDataStream): Promise<Buffer> {
  return new Promise((resolve, reject) => {
    const chunks: Buffer[] = [];
    stream.on('data', (c: Buffer) => chunks.push(c));
    stream.on('end', () => resolve(Buffer.concat(chunks)));
    stream.on('error', reject);
  });
}

/** Start the relay; resolves once it listens. */
export async function startRelay(opts: RelayOptions): Promise<Relay> {
  const host = opts.host ?? '127.0.0.1';
  const dir = path.resolve(opts.dir);
  const sizeLimit = opts.sizeLimit ?? 10 * 1024 * 1024;
  const log = opts.log ?? (() => {});
  await fs.mkdir(dir, { recursive: true });
  // Ids sort by receive time; keep them strictly increasing within this process.
  let lastMs = 0;
  const receiveTime = () => {
    lastMs = Math.max(Date.now(), lastMs + 1);
    return new Date(lastMs);
  };

  const checkAddress = (address: SMTPServerAddress, what: 'sender' | 'recipient', cb: (err?: Error | null) => void) => {
    // The null reverse-path <> is allowed for the sender (bounces).
    if (what === 'sender' && address.address === '') return cb();
    if (!MAILBOX.test(address.address)) return cb(new SmtpReply(501, `5.1.${what === 'sender' ? '7' : '3'} Bad ${what} address syntax: <${address.address}>`));
    cb();
  };

  const server = new SMTPServer({
    name: 'millrace-relay.localhost',
    banner: 'Millrace local relay',
    size: sizeLimit,
    rejectOversized: true,
    // Loopback only and no certificate: plain-text AUTH is acceptable here and nowhere else.
    disabledCommands: ['STARTTLS'],
    allowInsecureAuth: true,
    authMethods: ['PLAIN', 'LOGIN'],
    authOptional: !opts.user,
    disableReverseLookup: true,
    closeTimeout: 2_000,
    logger: false,
    onAuth(auth, _session, cb) {
      if (!opts.user) return cb(null, { user: auth.username ?? 'anonymous' });
      if (auth.username === opts.user && auth.password === (opts.pass ?? '')) return cb(null, { user: auth.username });
      return cb(null, { message: '5.7.8 Authentication credentials invalid', responseCode: 535 });
    },
    onMailFrom(address, _session, cb) {
      checkAddress(address, 'sender', cb);
    },
    onRcptTo(address, _session, cb) {
      checkAddress(address, 'recipient', cb);
    },
    onData(stream: SMTPServerDataStream, session: SMTPServerSession, cb) {
      collect(stream)
        .then(async (raw) => {
          // With rejectOversized the server answers 552 itself; nothing is stored.
          if (stream.sizeExceeded) return cb(new SmtpReply(552, `5.3.4 Message too big for this relay (limit ${sizeLimit} bytes)`));
          const now = receiveTime();
          const id = mailboxId(now, randomBytes(6).toString('hex'));
          const subject = (await simpleParser(raw, { skipHtmlToText: true, skipTextToHtml: true, skipImageLinks: true }).catch(() => null))?.subject ?? '';
          const entry: MailboxEntry = {
            id,
            receivedAt: now.toISOString(),
            envelopeFrom: session.envelope.mailFrom ? session.envelope.mailFrom.address : '',
            envelopeTo: session.envelope.rcptTo.map((r) => r.address),
            subject,
            size: raw.byteLength,
          };
          // The message first, then its index entry: an .eml is never missing behind an entry.
          await writeAtomically(path.join(dir, `${id}.eml`), raw);
          await writeAtomically(path.join(dir, `${id}.json`), JSON.stringify(entry, null, 2) + '\n');
          await syncDir(dir);
          log(`queued ${id}: ${entry.envelopeFrom} → ${entry.envelopeTo.join(', ')} "${subject}" (${raw.byteLength} bytes)`);
          cb(null, `2.0.0 OK: queued as <${id}>`);
        })
        .catch((err: unknown) => {
          log(`could not store a message: ${err instanceof Error ? err.message : String(err)}`);
          // 451: the client keeps the message and tries again later (RFC 5321 §4.2.2).
          cb(new SmtpReply(451, '4.3.0 Local error in processing; try again later'));
        });
    },
  });

  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(opts.port, host, () => {
      server.off('error', reject);
      resolve();
    });
  });
  server.on('error', (err) => log(`error: ${err.message}`));
  const address = server.server.address();
  const port = typeof address === 'object' && address ? address.port : opts.port;
  log(`listening on ${host}:${port}, storing messages in ${dir}`);
  return {
    port,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}

const isMain = process.argv[1] !== undefined && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url);
if (isMain) {
  const { config } = await import('../src/lib/server/config');
  const c = config();
  const relay = await startRelay({
    port: c.SMTP_PORT,
    host: '127.0.0.1',
    dir: c.MAILBOX_DIR,
    ...(c.SMTP_USER ? { user: c.SMTP_USER, pass: c.SMTP_PASS ?? '' } : {}),
    log: (line) => console.log(`[relay] ${line}`),
  });
  const stop = () => {
    void relay.close().then(() => process.exit(0));
  };
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
}
