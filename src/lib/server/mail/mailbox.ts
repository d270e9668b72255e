import fs from 'node:fs/promises';
import path from 'node:path';
import { z } from 'zod';
import { simpleParser, type AddressObject } from 'mailparser';
import { config } from '../config';
import { HttpError } from '../http';

// The local relay stores each message as {id}.eml (the message as received) and {id}.json (a
// small index entry). Mailbox reads them back; the .eml files are the truth, the JSON a shortcut.

/** The relay's folder, resolved against the working directory. */
export function mailboxDir(): string {
  return path.resolve(config().MAILBOX_DIR);
}

/** Mailbox belongs to the local demo; elsewhere it answers 404. */
export function requireDemoMailbox(): void {
  if (!config().DEMO_MODE) throw new HttpError('NOT_FOUND', 'Mailbox is the local demo mail catcher; it is shown only with DEMO_MODE=1.');
}

/** Message ids: receive time (sortable) and a random suffix; nothing else may name a file. */
export const MAILBOX_ID_PATTERN = /^\d{8}T\d{9}Z-[0-9a-f]{12}$/;

export const mailboxEntrySchema = z.object({
  id: z.string().regex(MAILBOX_ID_PATTERN),
  receivedAt: z.string(),
  envelopeFrom: z.string(),
  envelopeTo: z.array(z.string()),
  subject: z.string(),
  size: z.number().int().nonnegative(),
});
export type MailboxEntry = z.infer<typeof mailboxEntrySchema>;

/** A message id for a receive time. */
export function mailboxId(at: Date, random: string): string {
  return `${at.toISOString().replace(/[-:.]/g, '')}-${random}`;
}

function receivedAtOf(id: string): string {
  const m = /^(\d{4})(\d{2})(\d{2})T(\d{2})(\d{2})(\d{2})(\d{3})Z/.exec(id);
  return m ? `${m[1]}-${m[2]}-${m[3]}T${m[4]}:${m[5]}:${m[6]}.${m[7]}Z` : '';
}

/** The messages in the mailbox folder, newest first (an .eml without its index entry is still listed). */
export async function listMailbox(dir: string, limit = 200): Promise<MailboxEntry[]> {
  let names: string[];
  try {
    names = await fs.readdir(dir);
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') return [];
    throw err;
  }
  const ids = names
    .filter((n) => n.endsWith('.eml'))
    .map((n) => n.slice(0, -4))
    .filter((id) => MAILBOX_ID_PATTERN.test(id))
    .sort()
    .reverse()
    .slice(0, limit);
  return Promise.all(
    ids.map(async (id): Promise<MailboxEntry> => {
      try {
        const parsed = mailboxEntrySchema.safeParse(JSON.parse(await fs.readFile(path.join(dir, `${id}.json`), 'utf8')));
        if (parsed.success) return parsed.data;
      } catch {
        // no index entry (or a broken one): read the message itself below
      }
      const raw = await fs.readFile(path.join(dir, `${id}.eml`));
      const mail = await simpleParser(raw);
      return { id, receivedAt: receivedAtOf(id), envelopeFrom: addressText(mail.from), envelopeTo: addressList(mail.to), subject: mail.subject ?? '', size: raw.byteLength };
    }),
  );
}

function addressText(a: AddressObject | AddressObject[] | undefined): string {
  if (!a) return '';
  return (Array.isArray(a) ? a : [a]).map((x) => x.text).join(', ');
}

function addressList(a: AddressObject | AddressObject[] | undefined): string[] {
  if (!a) return [];
  return (Array.isArray(a) ? a : [a]).flatMap((x) => x.value.map((v) => v.address ?? '')).filter(Boolean);
}

export interface MailboxMessage {
  id: string;
  receivedAt: string;
  from: string;
  to: string;
  subject: string;
  date: string | null;
  messageId: string | null;
  text: string;
  html: string | null;
  size: number;
}

/** One message parsed with mailparser, or null when there is none with that id. */
export async function readMailboxMessage(dir: string, id: string): Promise<MailboxMessage | null> {
  if (!MAILBOX_ID_PATTERN.test(id)) return null;
  let raw: Buffer;
  try {
    raw = await fs.readFile(path.join(dir, `${id}.eml`));
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') return null;
    throw err;
  }
  const mail = await simpleParser(raw);
  return {
    id,
    receivedAt: receivedAtOf(id),
    from: addressText(mail.from),
    to: addressText(mail.to),
    subject: mail.subject ?? '',
    date: mail.date ? mail.date.toISOString() : null,
    messageId: mail.messageId ?? null,
    text: mail.text ?? '',
    html: typeof mail.html === 'string' ? mail.html : null,
    size: raw.byteLength,
  };
}
