import type { Kysely } from 'kysely';
import type { Database } from '../db/schema';
import { sendDueMail, type MailTransport, type SendReport } from './outbox';
import { flushDigests } from './trip-mail';

export interface MailWorker {
  /** Stop after the round in progress (if any) has finished. */
  stop(): Promise<void>;
}

/** One worker round: queue the digests of ended periods, then send what is due. */
export async function runMailRound(db: Kysely<Database>, transport: MailTransport, now: Date): Promise<SendReport & { digests: number }> {
  const digests = await flushDigests(db, now);
  return { digests, ...(await sendDueMail(db, transport, now)) };
}

/**
 * Run mail rounds every `intervalMs` (default 5 s) until stopped; rounds never overlap. Errors
 * (the database away, say) are logged and the next round tries again.
 */
export function startMailWorker(
  db: Kysely<Database>,
  transport: MailTransport,
  opts: { intervalMs?: number; clock?: () => Date; log?: (line: string) => void } = {},
): MailWorker {
  const intervalMs = opts.intervalMs ?? 5_000;
  const clock = opts.clock ?? (() => new Date());
  const log = opts.log ?? ((line: string) => console.log(`[mail] ${line}`));
  let stopped = false;
  let timer: NodeJS.Timeout | null = null;
  let running: Promise<void> = Promise.resolve();

  const tick = () => {
    running = (async () => {
      try {
        const r = await runMailRound(db, transport, clock());
        if (r.digests || r.sent || r.retried || r.failed) log(`digests ${r.digests}, sent ${r.sent}, retry later ${r.retried}, failed ${r.failed}`);
      } catch (err) {
        log(`round failed: ${err instanceof Error ? err.message : String(err)}`);
      }
    })();
    void running.then(() => {
      if (!stopped) timer = setTimeout(tick, intervalMs);
    });
  };
  tick();
  return {
    async stop() {
      stopped = true;
      if (timer) clearTimeout(timer);
      await running;
    },
  };
}
