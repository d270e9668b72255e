import fs from 'node:fs';
import { expect, test, type APIRequestContext, type Page } from '@playwright/test';
import { DEMO_PASSWORD, ROLE_ACCOUNTS, type DemoRole } from './accounts';
import { concatBytes } from '../integration/packets';
import { decodeBuffer } from '../../src/lib/telemetry/decode';
import { APID, type LoopRecord } from '../../src/lib/telemetry/types';
import { cucToUnixSeconds } from '../../src/lib/telemetry/cuc';
import { formatValue } from '../../src/lib/format';
import { spacecraftSheetSchema } from '../../src/lib/spacecraft-sheet.schema';
import { PacketStream } from '../../ingest/generator';
import { parseScenario } from '../../ingest/scenario.schema';

const SCREENS = 'test-results/screens';
const shot = (page: Page, name: string) => page.screenshot({ path: `${SCREENS}/${name}.png`, fullPage: true });

/** A session of its own per test, so that another spec signing out a shared stored session cannot end it. */
function signedInAs(role: DemoRole) {
  test.beforeEach(async ({ page }) => {
    const res = await page.request.post('/api/auth/sign-in', { data: { email: ROLE_ACCOUNTS[role], password: DEMO_PASSWORD } });
    expect(res.ok()).toBe(true);
  });
}

async function contextAs(playwright: { request: { newContext: (o: { baseURL: string }) => Promise<APIRequestContext> } }, baseURL: string, role: DemoRole) {
  const ctx = await playwright.request.newContext({ baseURL });
  const res = await ctx.post('/api/auth/sign-in', { data: { email: ROLE_ACCOUNTS[role], password: DEMO_PASSWORD } });
  expect(res.ok()).toBe(true);
  return ctx;
}

/** Loop housekeeping packets the link drops in the injected fault (10 Hz: 25 s of loop data). */
const DROPPED = 250;
/** The injected fault starts this long after the simulated timeline does. */
const FAULT_AT_S = 60;

/**
 * MR-1 on the link, from the simulated feed's packet generator: the spacecraft simulation flies a
 * scenario whose only fault is a link dropout of DROPPED loop packets FAULT_AT_S into the timeline,
 * and each post sends what it produced since the last one to /api/ingest, as the feed does in a pass.
 * The timeline starts 100 s before the test, so that the dropout and the packets after it lie in the
 * past (never ahead of the clock) by the time the test asks for them.
 */
class SimLink {
  private readonly stream: PacketStream;
  readonly startMs = Math.floor(Date.now() / 1000) * 1000 - 100_000;
  /** The newest loop-0 record posted. */
  newestLoop: LoopRecord | null = null;
  constructor(
    private readonly request: APIRequestContext,
    private readonly token: string,
  ) {
    const sheet = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync('ingest/fleet/MR-1.json', 'utf8')));
    const scenario = parseScenario({
      name: 'e2e link dropout',
      description: 'Healthy MR-1; the link drops a run of loop housekeeping packets.',
      seed: 41,
      faults: [{ kind: 'sequence-gap', apid: APID.loop, start_s: FAULT_AT_S, count: DROPPED }],
    });
    this.stream = new PacketStream({ sheet, scenario, startMs: this.startMs });
  }
  /** Loop packets the simulation has dropped on the link so far. */
  get dropped(): number {
    return this.stream.counts[APID.loop].dropped;
  }
  /** Simulate up to `untilMs` (never past now) and post what came out; returns the newest loop-0 sample time (Unix ms). */
  async postUntil(untilMs: number): Promise<number> {
    this.stream.advanceTo(Math.min(untilMs, Date.now()));
    const body = concatBytes(this.stream.flush());
    decodeBuffer(body, { loopIds: new Set([0]) }, { record: (r) => r.kind === 'loop' && r.loopId === 0 && (this.newestLoop = r), reject: () => {}, idle: () => {} });
    const res = await this.request.post('/api/ingest?station=ribeira', {
      headers: { authorization: `Bearer ${this.token}`, 'content-type': 'application/octet-stream' },
      data: Buffer.from(body),
    });
    expect(res.status(), await res.text()).toBe(200);
    return Math.round(cucToUnixSeconds(this.newestLoop!.coarse, this.newestLoop!.fine) * 1000);
  }
}

const newestOnChart = (page: Page) => page.locator('[data-spacecraft="MR-1"]').getAttribute('data-newest-sample-ms').then(Number);

test.describe('as the operator', () => {
  signedInAs('operator');

  test('watches MR-1 while simulated packets arrive, sees the charts grow, gets the trip of an injected link dropout, acknowledges it with a note and finds it acknowledged in Trips', async ({ page, playwright, baseURL }) => {
    fs.mkdirSync(SCREENS, { recursive: true });
    const admin = await contextAs(playwright, baseURL!, 'admin');
    const created = await admin.post('/api/spacecraft/MR-1/tokens', { data: { label: 'pass watch e2e' } });
    expect(created.status()).toBe(201);
    const link = new SimLink(admin, ((await created.json()) as { token: string }).token);
    // Fifty healthy seconds of the simulated timeline.
    let simMs = link.startMs + 50_000;
    const lastPosted = await link.postUntil(simMs);

    await page.goto('/');
    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Pass watch' }).click();
    await expect(page.getByRole('heading', { name: 'Pass watch', level: 1 })).toBeVisible();
    await page.getByRole('link', { name: 'MR-1', exact: true }).click();
    await expect(page.getByRole('heading', { name: /Pass watch MR-1/, level: 1 })).toBeVisible();
    await expect(page.getByTestId('connection')).toHaveText(/live/);
    await expect(page.getByRole('figure', { name: 'L0 Measured pump current' }).locator('canvas')).toBeVisible();
    await expect(page.getByRole('figure', { name: 'Body rates ω (gyro, body frame)' }).locator('canvas')).toBeVisible();
    const status = page.getByRole('region', { name: 'Pass status' });
    await expect(status.getByText(/LOS in \d|Next AOS in \d|No pass predicted/)).toBeVisible();

    // The charts grow with every batch, without a reload: the newest sample on the chart follows the posts.
    const first = await newestOnChart(page);
    expect(first, 'no other MR-1 sample is newer than this link posts').toBeLessThanOrEqual(lastPosted);
    let newest = first;
    for (let k = 0; k < 4; k++) {
      simMs += 1000;
      newest = await link.postUntil(simMs);
      await expect.poll(() => newestOnChart(page), { timeout: 5000 }).toBeGreaterThanOrEqual(newest);
    }
    expect(newest).toBeGreaterThan(first);
    expect(link.dropped, 'the dropout lies ahead').toBe(0);
    // The readout shows the newest measured current the simulation sent (as the charts round it).
    const health = page.getByRole('article', { name: 'Loop L0 health' });
    const current = Number(link.newestLoop!.measuredCurrent_a.toPrecision(6));
    await expect(health.getByRole('row', { name: /Current/ })).toContainText(formatValue(current));
    await shot(page, 'pass-watch-live-light');

    // The simulation flies on through the injected fault: the link drops 250 loop packets, then the
    // packets after the dropout arrive and reveal the gap. The engineer runs the jobs.
    await link.postUntil(Date.now());
    expect(link.dropped, 'the whole dropout was flown').toBe(DROPPED);
    const engineer = await contextAs(playwright, baseURL!, 'engineer');
    expect((await engineer.post('/api/jobs/run', { data: {} })).status()).toBe(200);
    const trips = (await (await page.request.get('/api/trips?spacecraft=MR-1&kind=telemetry-gap&state=open')).json()) as {
      trips: { id: number; quantity: string; level: string; loop_id: number | null; value: number | null }[];
    };
    const trip = trips.trips.find((t) => t.quantity === 'missing_packets' && t.level === 'warning');
    expect(trip, JSON.stringify(trips)).toBeDefined();
    // The trip is the dropout's: 250 packets missing in the window it ended in (warning at 200).
    expect(trip!.loop_id).toBeNull();
    expect(trip!.value).toBe(DROPPED);

    // The trip reaches the open page by the live stream.
    const item = page.getByRole('listitem', { name: `Trip ${trip!.id}` });
    await expect(item).toBeVisible({ timeout: 10_000 });
    await expect(item).toContainText('warning');
    await expect(item).toContainText('Packets missing in sequence gaps');
    await expect(page.getByRole('article', { name: 'Body health' }).locator('header')).toContainText('warning');
    await shot(page, 'pass-watch-trip-light');
    await page.getByRole('button', { name: 'Switch between light and dark theme' }).click();
    await expect(page.locator('html')).toHaveAttribute('data-theme', 'dark');
    await page.waitForTimeout(300);
    await shot(page, 'pass-watch-trip-dark');

    // A warning needs a note.
    await item.getByRole('button', { name: 'Acknowledge' }).click();
    await expect(item.getByText('A warning needs a note')).toBeVisible();
    await item.getByLabel(/Note/).fill('Link dropped 250 loop packets over Ribeira; attitude kept coming, loop data resumed; watching the next pass.');
    await item.getByRole('button', { name: 'Acknowledge' }).click();
    await expect(item).toContainText('acknowledged', { timeout: 10_000 });
    await expect(item).toContainText('Link dropped 250 loop packets over Ribeira');
    await shot(page, 'pass-watch-acknowledged-dark');
    await page.getByRole('button', { name: 'Switch between light and dark theme' }).click();

    // The handover form lists ended passes; an empty note is refused on the field.
    const log = page.getByRole('region', { name: 'Pass log' });
    await expect(log).toBeVisible();
    const form = page.getByRole('form', { name: 'Handover note' });
    // Six stations under a low orbit: some pass of the last day has always ended.
    await form.getByRole('button', { name: 'Save handover note' }).click();
    await expect(form.getByText('Write the handover')).toBeVisible();
    await form.getByLabel('Handover note').fill('Link dropout trip acknowledged; loop data back. Next shift: watch the packet count at AOS.');
    await form.getByRole('button', { name: 'Save handover note' }).click();
    await expect(log.getByRole('list', { name: 'Passes' }).getByText('Link dropout trip acknowledged; loop data back.')).toBeVisible();
    await shot(page, 'pass-watch-pass-log-light');

    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Trips' }).click();
    const row = page.getByRole('row').filter({ has: page.getByRole('link', { name: `#${trip!.id}`, exact: true }) });
    await expect(row).toContainText('acknowledged');
    await shot(page, 'pass-watch-trips-after');
    await admin.dispose();
    await engineer.dispose();
  });
});
