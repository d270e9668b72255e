import fs from 'node:fs';
import { expect, test, type Page } from '@playwright/test';
import { DEMO_PASSWORD, ROLE_ACCOUNTS, type DemoRole } from './accounts';
import { db, pool } from '../../src/lib/server/db';
import { generatePackets } from '../../ingest/generator';
import { parseScenario, type Scenario } from '../../ingest/scenario.schema';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { insertLimitSet } from '../../src/lib/server/limit-sets';
import { DEFAULT_RULES } from '../../src/lib/limits/defaults';
import { ingestBody } from '../../src/lib/server/ingest';
import { BASELINE_WINDOWS, runAnalysisJob } from '../../src/lib/server/analysis-job';

// A trip raised the real way, as the integration test does it: the torque-constant-loss scenario
// (fault moved later by the drift baseline's length, so the baseline forms on healthy data) through
// ingest and analysis.
const KEY = `CF-${Date.now().toString(36).toUpperCase().slice(-5)}`;
let trips: { id: number; quantity: string; level: string }[] = [];

test.beforeAll(async () => {
  test.setTimeout(300_000);
  const raw = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync('ingest/fleet/MR-1.json', 'utf8')));
  const sheet: SpacecraftSheet = { ...raw, spacecraft: { key: KEY, name: `Casefile ${KEY}` } };
  const sc = await db.transaction().execute(async (trx) => {
    const created = await insertSpacecraftWithSheet(trx, { ...sheet, effectiveFrom: '2026-01-01T00:00:00Z' }, null);
    await insertLimitSet(trx, created.id, { name: 'Default limits', notes: '', rules: DEFAULT_RULES }, null, 'active');
    return created;
  });
  const base = parseScenario(JSON.parse(fs.readFileSync('ingest/scenarios/torque-constant-loss.json', 'utf8')));
  const scenario: Scenario = { ...base, faults: base.faults.map((f) => ({ ...f, start_s: f.start_s + BASELINE_WINDOWS * 60 })) };
  const endMs = Math.floor(Date.now() / 60_000) * 60_000 - 60_000;
  const minutes = BASELINE_WINDOWS + 25;
  const startMs = endMs - minutes * 60_000;
  for (const chunk of generatePackets({ sheet, scenario, startMs, durationMs: minutes * 60_000, chunkBytes: 4 << 20 })) {
    await ingestBody(pool, db, chunk.slice(), { spacecraftId: sc.id, stationId: null, tokenId: null }, endMs + 5_000);
  }
  await runAnalysisJob(db, pool, { id: sc.id, key: KEY });
  trips = await db.selectFrom('trip').select(['id', 'quantity', 'level']).where('spacecraft_id', '=', sc.id).where('kind', '=', 'torque-constant-drift').orderBy('onset_at').execute();
  if (trips.length < 1) throw new Error('the torque-constant-loss flight raised no drift trip');
});

/** A session of its own per test, so another spec signing out cannot end it. */
function signedInAs(role: DemoRole) {
  test.beforeEach(async ({ page }: { page: Page }) => {
    const res = await page.request.post('/api/auth/sign-in', { data: { email: ROLE_ACCOUNTS[role], password: DEMO_PASSWORD } });
    expect(res.ok()).toBe(true);
  });
}

const HANDLING = 'The eutectic gallium alloy in the loops attacks aluminium and many other metals';

/** Every evidence chart drew a plot (not its empty note) and has its reading. */
async function chartsRendered(page: Page) {
  for (const key of ['effectiveness', 'drift', 'scatter', 'compensation', 'pressure', 'heating', 'spectrum', 'waterfall', 'ledger']) {
    const fig = page.locator(`figure[data-evidence="${key}"]`);
    await expect(fig.locator('canvas').first(), key).toBeVisible();
    await expect(fig.locator('figcaption'), key).not.toBeEmpty();
  }
}

fs.mkdirSync('test-results/screens', { recursive: true });

test.describe('as the analyst', () => {
  signedInAs('analyst');

  test('opens a trip from Trips, reads the evidence, adds a note with an attachment, exports CSV and resolves with a conclusion', async ({ page }) => {
    test.setTimeout(180_000);
    await page.setViewportSize({ width: 1440, height: 1000 });
    const trip = trips.find((t) => t.quantity === 'effectiveness') ?? trips[0]!;
    await page.goto(`/trips?spacecraft=${KEY}`);
    await page.getByRole('link', { name: `#${trip.id}`, exact: true }).click();
    await expect(page.getByRole('heading', { level: 1, name: new RegExp(`^Casefile · .+ on ${KEY} loop L0$`) })).toBeVisible();
    await chartsRendered(page);
    await expect(page.locator('figure[data-evidence="effectiveness"] figcaption')).toContainText('drift baseline');
    await expect(page.getByText(/Estimated onset .* UTC/).first()).toBeVisible();
    // the drift chart and its reading name the limit set's CUSUM levels, and the detector's h as what it is
    const drift = page.locator('figure[data-evidence="drift"]');
    await expect(drift.getByText(/caution ≥ \d+ σ · limit set v\d+/)).toBeVisible();
    await expect(drift.getByText(/onset detector h = 7σ \(dates the onset, not a limit\)/)).toBeVisible();
    await expect(drift.locator('figcaption')).toContainText('limit set v');
    await expect(page.locator('figure[data-evidence="scatter"]').getByTestId('scatter-lines-note')).toContainText('τ = kT·I through the origin');
    await expect(page.getByRole('contentinfo', { name: 'Cautions' })).toContainText(HANDLING);
    await page.screenshot({ path: 'test-results/screens/casefile-light.png', fullPage: true });

    // dark theme for the control room
    await page.getByRole('button', { name: 'Switch between light and dark theme' }).click();
    await expect(page.locator('html')).toHaveAttribute('data-theme', 'dark');
    await chartsRendered(page);
    await page.screenshot({ path: 'test-results/screens/casefile-dark.png', fullPage: true });
    await page.getByRole('button', { name: 'Switch between light and dark theme' }).click();

    // raw samples one click away: click the effectiveness chart
    const over = page.locator('figure[data-evidence="effectiveness"] .u-over');
    await over.scrollIntoViewIfNeeded();
    const box = (await over.boundingBox())!;
    await over.hover({ position: { x: box.width * 0.7, y: box.height / 2 } });
    await expect(page.locator('figure[data-evidence="effectiveness"]').getByText(/UTC.*Effectiveness/)).toBeVisible();
    await over.click({ position: { x: box.width * 0.7, y: box.height / 2 } });
    const raw = page.getByRole('region', { name: 'Raw samples of one window' });
    await expect(raw.getByRole('heading', { name: /Raw samples · loop L0/ })).toBeVisible();
    await expect.poll(() => raw.locator('tbody tr').count(), { timeout: 15_000 }).toBeGreaterThan(500);
    expect(page.url()).toContain('raw=');
    await raw.screenshot({ path: 'test-results/screens/casefile-raw.png' });
    await raw.getByRole('button', { name: 'Close' }).click();

    // any span, typed in UTC
    const span = page.getByRole('region', { name: 'Span and evidence' });
    await span.getByLabel('From (UTC)').fill('yesterday');
    await span.getByRole('button', { name: 'Show span' }).click();
    await expect(span.getByRole('alert')).toContainText('YYYY-MM-DD HH:MM');
    const to = await span.getByLabel('To (UTC)').inputValue();
    const from = new Date(Date.parse(`${to.replace(' ', 'T')}:00Z`) - 30 * 60_000).toISOString().slice(0, 16).replace('T', ' ');
    await span.getByLabel('From (UTC)').fill(from);
    await span.getByRole('button', { name: 'Show span' }).click();
    await expect(page).toHaveURL(new RegExp(`from=${encodeURIComponent(`${from.replace(' ', 'T')}:00.000Z`)}`));
    await expect(span.getByText(`${from}:00 – `)).toBeVisible();
    await page.getByRole('button', { name: 'Around the trip' }).click();
    await expect(page).not.toHaveURL(/from=/);
    // the permalink keeps the span and the selected evidence
    await page.getByRole('button', { name: '±6 h' }).click();
    await expect(page).toHaveURL(/from=.*&to=/);
    await page.getByRole('group', { name: 'Evidence shown' }).getByLabel('Waterfall').uncheck();
    await expect(page).toHaveURL(/show=/);
    const link = page.url();
    await page.goto(link);
    await expect(page.getByRole('button', { name: '±6 h' })).toHaveAttribute('aria-pressed', 'true');
    await expect(page.locator('figure[data-evidence="waterfall"]')).toHaveCount(0);
    await expect(page.getByRole('group', { name: 'Evidence shown' }).getByLabel('Waterfall')).not.toBeChecked();
    await page.getByRole('button', { name: 'Around the trip' }).click();
    await page.getByRole('group', { name: 'Evidence shown' }).getByLabel('Waterfall').check();

    // a note with an attachment: a real PNG, the screenshot of the effectiveness chart
    const png = await page.locator('figure[data-evidence="effectiveness"]').screenshot();
    const notes = page.getByRole('form', { name: 'Add a note' });
    await notes.getByLabel('New note').fill('Effectiveness halves over two minutes; the pump-pressure constant agrees. Chart attached.');
    await notes.getByLabel(/Attachments/).setInputFiles({ name: 'effectiveness.png', mimeType: 'image/png', buffer: png });
    await notes.getByRole('button', { name: 'Add note' }).click();
    const thread = page.getByRole('list', { name: 'Notes' });
    await expect(thread.getByText('Effectiveness halves over two minutes')).toBeVisible();
    await expect(thread.getByRole('img', { name: 'Attachment effectiveness.png' })).toBeVisible();
    // a renamed executable is refused, with the reason on the field
    await notes.getByLabel('New note').fill('With a renamed program.');
    await notes.getByLabel(/Attachments/).setInputFiles({ name: 'plot.png', mimeType: 'image/png', buffer: Buffer.concat([Buffer.from('MZ'), Buffer.alloc(200)]) });
    await notes.getByRole('button', { name: 'Add note' }).click();
    await expect(notes.getByRole('alert')).toContainText('plot.png');
    await notes.getByLabel(/Attachments/).setInputFiles([]);

    // export the evidence as CSV and read it back
    const [download] = await Promise.all([page.waitForEvent('download'), page.getByRole('link', { name: 'Export CSV' }).click()]);
    expect(download.suggestedFilename()).toMatch(new RegExp(`^trip-${trip.id}-${KEY}-L0-evidence\\.csv$`));
    const csv = fs.readFileSync((await download.path())!, 'utf8').trim().split(/\r\n/);
    const header = csv[0]!.split(',');
    expect(header.slice(0, 4)).toEqual(['window_start_utc', 'spacecraft', 'loop_id', 'effectiveness']);
    const rows = csv.slice(1).map((l) => l.split(','));
    expect(rows.length).toBeGreaterThan(20);
    const eff = rows.map((r) => r[header.indexOf('effectiveness')]!).filter((v) => v !== '').map(Number);
    expect(eff.every((v) => Number.isFinite(v) && v > 0 && v < 1.5)).toBe(true);
    expect(Math.min(...eff)).toBeLessThan(0.55);

    // the printable report
    await page.getByRole('link', { name: 'Printable report' }).click();
    await expect(page.getByText('Casefile report')).toBeVisible();
    await expect(page.locator('figure[data-evidence="effectiveness"] canvas').first()).toBeVisible();
    await expect(page.getByText(HANDLING)).toBeVisible();
    await expect(page.getByRole('cell', { name: /^Effectiveness, last \d+ windows? \(/ })).toBeVisible();
    await page.screenshot({ path: 'test-results/screens/casefile-report.png', fullPage: true });
    await page.emulateMedia({ media: 'print' });
    await page.screenshot({ path: 'test-results/screens/casefile-report-print.png', fullPage: true });
    await page.emulateMedia({ media: 'screen' });
    await page.getByRole('link', { name: '← Back to the Casefile' }).click();

    // acknowledge if needed, then resolve with a conclusion
    const ack = page.getByRole('form', { name: 'Acknowledge' });
    if (await ack.isVisible()) {
      await ack.getByLabel(/Note/).fill('Looking at it in the Casefile.');
      await ack.getByRole('button', { name: 'Acknowledge' }).click();
      await expect(page.getByText(/^Acknowledged$/)).toBeVisible();
    }
    const conclusion = page.getByRole('form', { name: 'Conclusion' });
    await conclusion.getByRole('button', { name: 'Resolve' }).click();
    await expect(conclusion.getByText('Write the conclusion')).toBeVisible();
    const text = 'Loop 0 lost half its torque constant in two minutes; the pressure constant agrees and magnet temperature does not explain it. Loop de-rated; electrodes to be inspected.';
    await conclusion.getByLabel(/Conclusion/).fill(text);
    await conclusion.getByRole('button', { name: 'Resolve' }).click();
    const lifecycle = page.getByRole('complementary', { name: 'Lifecycle' });
    await expect(lifecycle.getByText(/^Resolved$/)).toBeVisible();
    await expect(lifecycle.getByText(text)).toBeVisible();
    await page.screenshot({ path: 'test-results/screens/casefile-resolved.png', fullPage: false });
  });
});

test.describe('as the operator', () => {
  signedInAs('operator');

  test('reads a drift trip but cannot resolve it', async ({ page }) => {
    await page.setViewportSize({ width: 1280, height: 900 });
    const trip = trips.find((t) => t.quantity !== 'effectiveness') ?? trips[0]!;
    await page.goto(`/trips/${trip.id}`);
    await expect(page.getByRole('heading', { level: 1, name: /^Casefile/ })).toBeVisible();
    await chartsRendered(page);
    const lifecycle = page.getByRole('complementary', { name: 'Lifecycle' });
    await expect(lifecycle.getByRole('button', { name: 'Resolve' })).toHaveCount(0);
    await expect(lifecycle.getByText(/You may not resolve this trip\. .*operators resolve telemetry-gap and channel-limit trips only/)).toBeVisible();
    await expect(page.getByRole('form', { name: 'Add a note' })).toHaveCount(0);
    const res = await page.request.post(`/api/trips/${trip.id}/resolve`, { data: { conclusion: 'Looks fine from here.' } });
    expect(res.status()).toBe(403);
    await page.screenshot({ path: 'test-results/screens/casefile-operator.png', fullPage: false });
    // the sheets hold the loops' hardware: the handling caution is there too
    await page.goto(`/spacecraft/${KEY}/sheets`);
    await expect(page.getByRole('contentinfo', { name: 'Cautions' })).toContainText(HANDLING);
  });
});
