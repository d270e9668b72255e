import fs from 'node:fs';
import { expect, test, type APIRequestContext, type Page } from '@playwright/test';
import { DEMO_PASSWORD, ROLE_ACCOUNTS, type DemoRole } from './accounts';
import { attitudeRecord, concatBytes, loopRecord } from '../integration/packets';
import { encodePacket } from '../../src/lib/telemetry';

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

/** Real-time housekeeping of MR-1 at 10 Hz: sequence counts and sample times only increase. */
class Link {
  private seq = 9000;
  private clockMs = Math.floor(Date.now() / 1000) * 1000 - 20_000;
  constructor(
    private readonly request: APIRequestContext,
    private readonly token: string,
  ) {}
  /** Post `seconds` of attitude and loop-0 packets at `current_a`; returns the newest sample time (Unix ms). */
  async post(seconds: number, current_a = 5): Promise<number> {
    const parts: Uint8Array[] = [];
    let last = 0;
    for (let i = 0; i < seconds * 10; i++) {
      last = this.clockMs + i * 100;
      parts.push(encodePacket(attitudeRecord(this.seq % 16384, last)), encodePacket(loopRecord(this.seq % 16384, last, 0, current_a)));
      this.seq++;
    }
    this.clockMs += seconds * 1000;
    const res = await this.request.post('/api/ingest?station=ribeira', {
      headers: { authorization: `Bearer ${this.token}`, 'content-type': 'application/octet-stream' },
      data: Buffer.from(concatBytes(parts)),
    });
    expect(res.status(), await res.text()).toBe(200);
    return last;
  }
}

const newestOnChart = (page: Page) => page.locator('[data-spacecraft="MR-1"]').getAttribute('data-newest-sample-ms').then(Number);

test.describe('as the operator', () => {
  signedInAs('operator');

  test('watches MR-1 while packets arrive, sees the charts grow, acknowledges a warning trip with a note and finds it acknowledged in Trips', async ({ page, playwright, baseURL }) => {
    fs.mkdirSync(SCREENS, { recursive: true });
    const admin = await contextAs(playwright, baseURL!, 'admin');
    const created = await admin.post('/api/spacecraft/MR-1/tokens', { data: { label: 'pass watch e2e' } });
    expect(created.status()).toBe(201);
    const link = new Link(admin, ((await created.json()) as { token: string }).token);
    const lastPosted = await link.post(3);

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
      newest = await link.post(1, 7);
      await expect.poll(() => newestOnChart(page), { timeout: 5000 }).toBeGreaterThanOrEqual(newest);
    }
    expect(newest).toBeGreaterThan(first);
    const health = page.getByRole('article', { name: 'Loop L0 health' });
    await expect(health.getByRole('row', { name: /Current/ })).toContainText('6.93');
    await shot(page, 'pass-watch-live-light');

    // Beyond the warning level of the measured current for longer than its persistence; the engineer runs the jobs.
    await link.post(2, 34);
    const engineer = await contextAs(playwright, baseURL!, 'engineer');
    expect((await engineer.post('/api/jobs/run', { data: {} })).status()).toBe(200);
    const trips = (await (await page.request.get('/api/trips?spacecraft=MR-1&kind=channel-limit&state=open')).json()) as { trips: { id: number; quantity: string; level: string; loop_id: number | null }[] };
    const trip = trips.trips.find((t) => t.quantity === 'measured_current_a' && t.loop_id === 0 && t.level === 'warning');
    expect(trip, JSON.stringify(trips)).toBeDefined();

    // The trip reaches the open page by the live stream.
    const item = page.getByRole('listitem', { name: `Trip ${trip!.id}` });
    await expect(item).toBeVisible({ timeout: 10_000 });
    await expect(item).toContainText('warning');
    await expect(item).toContainText('Measured pump current');
    await expect(health.locator('header')).toContainText('warning');
    await shot(page, 'pass-watch-trip-light');
    await page.getByRole('button', { name: 'Switch between light and dark theme' }).click();
    await expect(page.locator('html')).toHaveAttribute('data-theme', 'dark');
    await page.waitForTimeout(300);
    await shot(page, 'pass-watch-trip-dark');

    // A warning needs a note.
    await item.getByRole('button', { name: 'Acknowledge' }).click();
    await expect(item.getByText('A warning needs a note')).toBeVisible();
    await item.getByLabel(/Note/).fill('Current above 32 A after the test slew; pump commanded back to 5 A, watching the next pass.');
    await item.getByRole('button', { name: 'Acknowledge' }).click();
    await expect(item).toContainText('acknowledged', { timeout: 10_000 });
    await expect(item).toContainText('Current above 32 A after the test slew');
    await shot(page, 'pass-watch-acknowledged-dark');
    await page.getByRole('button', { name: 'Switch between light and dark theme' }).click();

    // The handover form lists ended passes; an empty note is refused on the field.
    const log = page.getByRole('region', { name: 'Pass log' });
    await expect(log).toBeVisible();
    const form = page.getByRole('form', { name: 'Handover note' });
    // Six stations under a low orbit: some pass of the last day has always ended.
    await form.getByRole('button', { name: 'Save handover note' }).click();
    await expect(form.getByText('Write the handover')).toBeVisible();
    await form.getByLabel('Handover note').fill('Trip on L0 current acknowledged; pump back at 5 A. Next shift: watch L0 current at AOS.');
    await form.getByRole('button', { name: 'Save handover note' }).click();
    await expect(log.getByRole('list', { name: 'Passes' }).getByText('Trip on L0 current acknowledged; pump back at 5 A.')).toBeVisible();
    await shot(page, 'pass-watch-pass-log-light');

    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Trips' }).click();
    const row = page.getByRole('row').filter({ has: page.getByRole('link', { name: `#${trip!.id}`, exact: true }) });
    await expect(row).toContainText('acknowledged');
    await shot(page, 'pass-watch-trips-after');
    await admin.dispose();
    await engineer.dispose();
  });
});
