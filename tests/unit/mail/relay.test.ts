import fs from 'node:fs/promises';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import nodemailer from 'nodemailer';
import { startRelay, type Relay } from '../../../fakes/smtp-relay';
import { listMailbox, readMailboxMessage } from '../../../src/lib/server/mail/mailbox';

/** A bare SMTP client: one command, one (possibly multi-line) reply. */
class Conversation {
  private buf = '';
  private waiting: ((line: string) => void) | null = null;
  private constructor(private readonly socket: net.Socket) {
    socket.setEncoding('utf8');
    socket.on('data', (d: string) => {
      this.buf += d;
      this.flush();
    });
  }
  private flush() {
    // A reply ends at a line "NNN text" (a space after the code); "NNN-text" continues it.
    const m = /(^|\r\n)(\d{3}) [^\r\n]*\r\n/.exec(this.buf);
    if (m && this.waiting) {
      const end = m.index + m[0].length;
      const reply = this.buf.slice(0, end);
      this.buf = this.buf.slice(end);
      const w = this.waiting;
      this.waiting = null;
      w(reply);
    }
  }
  private next(): Promise<string> {
    return new Promise((resolve) => {
      this.waiting = resolve;
      this.flush();
    });
  }
  static async open(port: number): Promise<{ c: Conversation; greeting: string }> {
    const socket = net.connect(port, '127.0.0.1');
    await new Promise<void>((r) => socket.once('connect', () => r()));
    const c = new Conversation(socket);
    return { c, greeting: await c.next() };
  }
  async send(line: string): Promise<string> {
    this.socket.write(`${line}\r\n`);
    return this.next();
  }
  close() {
    this.socket.destroy();
  }
}

const code = (reply: string) => Number(reply.slice(reply.lastIndexOf('\r\n', reply.length - 3) + 1).trim().slice(0, 3));

describe('local SMTP relay (reply codes as in Klensin, "Simple Mail Transfer Protocol", RFC 5321, 2008, §4.2)', () => {
  let dir: string;
  let relay: Relay;
  beforeAll(async () => {
    dir = await fs.mkdtemp(path.join(os.tmpdir(), 'millrace-relay-'));
    relay = await startRelay({ port: 0, dir, sizeLimit: 4096 });
  });
  afterAll(async () => {
    await relay.close();
    await fs.rm(dir, { recursive: true, force: true });
  });

  it('speaks ESMTP: 220 greeting, EHLO lists SIZE and AUTH, 501 for bad addresses, 552 for a declared size over the limit, 250 queued as <id>, 221', async () => {
    const { c, greeting } = await Conversation.open(relay.port);
    expect(code(greeting)).toBe(220);
    const ehlo = await c.send('EHLO client.test');
    expect(code(ehlo)).toBe(250);
    expect(ehlo).toMatch(/250[- ]SIZE 4096/);
    expect(ehlo).toMatch(/250[- ]AUTH PLAIN LOGIN/);
    expect(code(await c.send('MAIL FROM:<ops@millrace.test> SIZE=999999'))).toBe(552);
    expect(code(await c.send('MAIL FROM:<not an address>'))).toBe(501);
    expect(code(await c.send('MAIL FROM:<ops@millrace.test>'))).toBe(250);
    expect(code(await c.send('RCPT TO:<nobody>'))).toBe(501);
    expect(code(await c.send('RCPT TO:<operator@millrace.test>'))).toBe(250);
    expect(code(await c.send('DATA'))).toBe(354);
    const done = await c.send('Subject: Raw hello\r\nFrom: ops@millrace.test\r\nTo: operator@millrace.test\r\n\r\nBody line\r\n..leading dot\r\n.');
    expect(code(done)).toBe(250);
    const id = /queued as <([^>]+)>/.exec(done)?.[1];
    expect(id).toBeTruthy();
    expect(code(await c.send('QUIT'))).toBe(221);
    c.close();

    const files = await fs.readdir(dir);
    expect(files.filter((f) => f.endsWith('.tmp'))).toEqual([]);
    expect(files).toContain(`${id}.eml`);
    const entry = JSON.parse(await fs.readFile(path.join(dir, `${id}.json`), 'utf8'));
    expect(entry).toMatchObject({ id, envelopeFrom: 'ops@millrace.test', envelopeTo: ['operator@millrace.test'], subject: 'Raw hello' });
    const msg = await readMailboxMessage(dir, id!);
    // Dot-stuffing undone (RFC 5321 §4.5.2).
    expect(msg?.text).toBe('Body line\n.leading dot\n');
  });

  it('refuses a message over the size limit with 552 after DATA and stores nothing', async () => {
    const before = (await fs.readdir(dir)).length;
    const t = nodemailer.createTransport({ host: '127.0.0.1', port: relay.port, secure: false });
    const err = await t.sendMail({ from: 'ops@millrace.test', to: 'operator@millrace.test', subject: 'big', text: 'x'.repeat(10_000) }).catch((e: unknown) => e);
    expect((err as { responseCode?: number }).responseCode).toBe(552);
    expect((await fs.readdir(dir)).length).toBe(before);
  });

  it('takes every well-formed message from nodemailer and lists it in Mailbox, newest first', async () => {
    const t = nodemailer.createTransport({ host: '127.0.0.1', port: relay.port, secure: false });
    for (const n of [1, 2, 3]) {
      const info = await t.sendMail({ from: 'Millrace <millrace@localhost>', to: `op${n}@millrace.test`, subject: `Message ${n} ✓`, text: `n = ${n}`, html: `<p>n = <b>${n}</b></p>` });
      expect(info.response).toMatch(/^250 .*queued as </);
    }
    const list = await listMailbox(dir);
    expect(list.slice(0, 3).map((m) => m.subject)).toEqual(['Message 3 ✓', 'Message 2 ✓', 'Message 1 ✓']);
    const m = await readMailboxMessage(dir, list[0]!.id);
    expect(m?.html).toContain('<b>3</b>');
    expect(m?.to).toBe('op3@millrace.test');
    expect(await readMailboxMessage(dir, '../../etc/passwd')).toBeNull();
  });
});

describe('relay with a user and password', () => {
  let dir: string;
  let relay: Relay;
  beforeAll(async () => {
    dir = await fs.mkdtemp(path.join(os.tmpdir(), 'millrace-relay-auth-'));
    relay = await startRelay({ port: 0, dir, user: 'millrace', pass: 'relay-secret' });
  });
  afterAll(async () => {
    await relay.close();
    await fs.rm(dir, { recursive: true, force: true });
  });

  it('requires AUTH (530), refuses a wrong password (535) and accepts the right one (235), PLAIN and LOGIN (RFC 4954)', async () => {
    const { c } = await Conversation.open(relay.port);
    await c.send('EHLO client.test');
    expect(code(await c.send('MAIL FROM:<ops@millrace.test>'))).toBe(530);
    const wrong = Buffer.from('\0millrace\0nope').toString('base64');
    expect(code(await c.send(`AUTH PLAIN ${wrong}`))).toBe(535);
    const right = Buffer.from('\0millrace\0relay-secret').toString('base64');
    expect(code(await c.send(`AUTH PLAIN ${right}`))).toBe(235);
    expect(code(await c.send('MAIL FROM:<ops@millrace.test>'))).toBe(250);
    c.close();

    const good = nodemailer.createTransport({ host: '127.0.0.1', port: relay.port, secure: false, auth: { user: 'millrace', pass: 'relay-secret' }, authMethod: 'LOGIN' });
    expect((await good.sendMail({ from: 'ops@millrace.test', to: 'operator@millrace.test', subject: 's', text: 't' })).response).toMatch(/^250/);
    const bad = nodemailer.createTransport({ host: '127.0.0.1', port: relay.port, secure: false, auth: { user: 'millrace', pass: 'x' } });
    const err = await bad.sendMail({ from: 'ops@millrace.test', to: 'operator@millrace.test', subject: 's', text: 't' }).catch((e: unknown) => e);
    expect((err as { responseCode?: number }).responseCode).toBe(535);
  });
});
