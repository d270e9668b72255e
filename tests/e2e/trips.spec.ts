import fs from 'node:fs';
import { expect, test, type Page } from '@playwright/test';
import { DEMO_PASSWORD, ROLE_ACCOUNTS } from './accounts';
import { db } from '../../src/lib/server/db';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { quantityInfo } from '../../src/lib/limits/quantities';
import type { TripState } from '../../src/lib/server/db/schema';
import { tripRow } from '../integration/trip-rows';

// Trips written straight into the table on a spacecraft of this spec's own (the list is read as it
// is stored; how trips are raised is the integration tests' business).
const KEY = `TR-${Date.now().toString(36).toUpperCase().slice(-5)}`;
const BASE = Math.floor(Date.now() / 60_000) * 60_000 - 3 * 3_600_000;
const onsetOf = (i: number) => new Date(BASE + i * 10 * 60_000);
const hhmm = (d: Date) => d.toISOString().slice(0, 16).replace('T', ' ');

const SEEDS: { kind: string; quantity: string; level: 'caution' | 'warning'; state: TripState; loop: number | null }[] = [
  { kind: 'temperature-rise', quantity: 'electrode_temp_mean_c', level: 'caution', state: 'open', loop: 0 },
  { kind: 'temperature-rise', quantity: 'electrode_temp_mean_c', level: 'warning', state: 'open', loop: 0 },
  { kind: 'temperature-rise', quantity: 'electrode_temp_mean_c', level: 'caution', state: 'open', loop: 0 },
  { kind: 'temperature-rise', quantity: 'resistance_ohm', level: 'caution', state: 'open', loop: 1 },
  { kind: 'torque-constant-drift', quantity: 'effectiveness', level: 'caution', state: 'acknowledged', loop: 0 },
  { kind: 'torque-constant-drift', quantity: 'effectiveness', level: 'warning', state: 'acknowledged', loop: 1 },
  { kind: 'telemetry-gap', quantity: 'missing_packets', level: 'caution', state: 'resolved', loop: null },
  { kind: 'flow-pulsation', quantity: 'pulsation_peak', level: 'warning', state: 'open', loop: 0 },
];
let ids: number[] = [];

test.beforeAll(async () => {
  const raw = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync('ingest/fleet/MR-3.json', 'utf8')));
  const sheet: SpacecraftSheet = { ...raw, spacecraft: { key: KEY, name: `Trips ${KEY}` } };
  const sc = await db.transaction().execute((trx) => insertSpacecraftWithSheet(trx, { ...sheet, effectiveFrom: '2026-01-01T00:00:00Z' }, null));
  ids = [];
  for (const [i, s] of SEEDS.entries()) {
    const info = quantityInfo(s.quantity)!;
    const onset = onsetOf(i);
    const row = await db
      .insertInto('trip')
      .values(
        tripRow({ spacecraftId: sc.id, loop: s.loop, kind: s.kind, quantity: s.quantity, level: s.level, state: s.state, onset }, 60_000, {
          cleared_at: s.state === 'resolved' ? new Date(onset.getTime() + 5 * 60_000) : null,
          value: 31.5,
          peak_value: 32,
          limit_value: 30,
          last_value: 31.5,
          evidence: JSON.stringify({ rule: { cautionHigh: 30, warningHigh: 40, cautionLow: null, warningLow: null, clearHigh: 29, clearLow: null, persistence: 3 }, quantity: { key: info.key, label: info.label, unit: info.unit, source: info.source }, points: [], window: { from: onset.getTime(), to: onset.getTime() } }),
        }),
      )
      .returning('id')
      .executeTakeFirstOrThrow();
    ids.push(row.id);
  }
});

test.beforeEach(async ({ page }) => {
  const res = await page.request.post('/api/auth/sign-in', { data: { email: ROLE_ACCOUNTS.analyst, password: DEMO_PASSWORD } });
  expect(res.ok()).toBe(true);
});

fs.mkdirSync('test-results/screens', { recursive: true });

const rows = (page: Page) => page.getByRole('table', { name: 'Trips' }).locator('tbody tr');
/** The trip ids of the rows shown, in order. */
async function shownIds(page: Page): Promise<number[]> {
  const links = await rows(page).locator('td:first-child a').allInnerTexts();
  return links.map((t) => Number(t.replace('#', '')));
}
const idsWhere = (pred: (s: (typeof SEEDS)[number], i: number) => boolean) =>
  SEEDS.map((s, i) => ({ s, i }))
    .filter(({ s, i }) => pred(s, i))
    .map(({ i }) => ids[i]!);

test.describe('Trips as the analyst', () => {
  test('filters by state and kind, sorts by a column, filters by loop and time, and opens a trip', async ({ page }) => {
    await page.setViewportSize({ width: 1440, height: 900 });
    await page.goto(`/trips?spacecraft=${KEY}`);
    await expect(page.getByRole('heading', { level: 1, name: 'Trips' })).toBeVisible();
    await expect(rows(page)).toHaveCount(SEEDS.length);
    // newest onset first, the Onset column says so
    expect(await shownIds(page)).toEqual([...ids].reverse());
    await expect(page.getByRole('columnheader', { name: /Onset/ })).toHaveAttribute('aria-sort', 'descending');
    await expect(page.getByRole('columnheader', { name: /Level/ })).toHaveAttribute('aria-sort', 'none');

    await page.getByLabel('State', { exact: true }).selectOption('open');
    await expect(rows(page)).toHaveCount(5);
    await expect(page).toHaveURL(/[?&]state=open(&|$)/);
    await page.getByLabel('Kind', { exact: true }).selectOption('temperature-rise');
    await expect(rows(page)).toHaveCount(4);
    await expect(page).toHaveURL(/[?&]kind=temperature-rise(&|$)/);
    expect((await shownIds(page)).sort()).toEqual(idsWhere((s) => s.state === 'open' && s.kind === 'temperature-rise').sort());

    // sort by level: ascending puts cautions first, a second click reverses
    await page.getByRole('button', { name: 'Level', exact: true }).click();
    await expect(page.getByRole('columnheader', { name: /Level/ })).toHaveAttribute('aria-sort', 'ascending');
    await expect(page.getByRole('columnheader', { name: /Onset/ })).toHaveAttribute('aria-sort', 'none');
    await expect(page).toHaveURL(/sort=level&order=asc/);
    await expect(rows(page).first().locator('td').nth(2)).toContainText(/caution/i);
    await page.getByRole('button', { name: 'Level', exact: true }).click();
    await expect(page.getByRole('columnheader', { name: /Level/ })).toHaveAttribute('aria-sort', 'descending');
    await expect(rows(page).first().locator('td').nth(2)).toContainText(/warning/i);
    expect((await shownIds(page))[0]).toBe(ids[1]);
    // a third click reverses again rather than leaving the list unsorted
    await page.getByRole('button', { name: 'Level', exact: true }).click();
    await expect(page.getByRole('columnheader', { name: /Level/ })).toHaveAttribute('aria-sort', 'ascending');

    // loop filter
    await page.getByLabel('Loop', { exact: true }).selectOption('1');
    await expect(rows(page)).toHaveCount(1);
    expect(await shownIds(page)).toEqual(idsWhere((s) => s.state === 'open' && s.kind === 'temperature-rise' && s.loop === 1));
    await expect(page).toHaveURL(/[?&]loop=1(&|$)/);
    await page.getByLabel('Loop', { exact: true }).selectOption('');

    // onset between (UTC): trips 1 and 2 of the four
    await page.getByLabel('Onset from (UTC)', { exact: true }).fill(hhmm(onsetOf(1)));
    await page.getByLabel('to (UTC)', { exact: true }).fill(hhmm(onsetOf(3)));
    await page.getByRole('button', { name: 'Apply times' }).click();
    await expect(rows(page)).toHaveCount(2);
    expect((await shownIds(page)).sort()).toEqual([ids[1]!, ids[2]!].sort());
    await expect(page).toHaveURL(new RegExp(`from=${encodeURIComponent(onsetOf(1).toISOString())}`));
    await page.screenshot({ path: 'test-results/screens/trips.png', fullPage: true });

    // a reversed span is refused on the field, the list stays as it was
    await page.getByLabel('to (UTC)', { exact: true }).fill(hhmm(onsetOf(0)));
    await page.getByRole('button', { name: 'Apply times' }).click();
    await expect(page.getByText('To must be later than from.')).toBeVisible();
    await expect(page.getByLabel('to (UTC)', { exact: true })).toHaveAttribute('aria-invalid', 'true');
    await expect(rows(page)).toHaveCount(2);

    // the address reproduces the view
    await page.reload();
    await expect(rows(page)).toHaveCount(2);
    await expect(page.getByLabel('State', { exact: true })).toHaveValue('open');
    await expect(page.getByLabel('Kind', { exact: true })).toHaveValue('temperature-rise');
    await expect(page.getByLabel('Onset from (UTC)', { exact: true })).toHaveValue(hhmm(onsetOf(1)));

    // open a trip: its Casefile
    await page.getByRole('link', { name: `#${ids[2]}`, exact: true }).click();
    await expect(page).toHaveURL(new RegExp(`/trips/${ids[2]}$`));
    await expect(page.getByRole('heading', { level: 1, name: new RegExp(`^Casefile · .+ on ${KEY} loop L0$`) })).toBeVisible();
  });

  test('a bad filter in the address is named and left out; the others still apply', async ({ page }) => {
    await page.setViewportSize({ width: 1440, height: 900 });
    await page.goto(`/trips?spacecraft=${KEY}&state=closed&kind=torque-constant-drift&loop=9`);
    const notice = page.getByTestId('dropped-filters');
    await expect(notice).toBeVisible();
    await expect(notice).toContainText('2 filters in the address were not understood');
    await expect(notice).toContainText('state=closed');
    await expect(notice).toContainText('state must be one of open, acknowledged, resolved');
    await expect(notice).toContainText('loop=9');
    await expect(page.getByLabel('Spacecraft', { exact: true })).toHaveValue(KEY);
    await expect(page.getByLabel('Kind', { exact: true })).toHaveValue('torque-constant-drift');
    await expect(page.getByLabel('State', { exact: true })).toHaveValue('');
    await expect(rows(page)).toHaveCount(2);
    expect((await shownIds(page)).sort()).toEqual(idsWhere((s) => s.kind === 'torque-constant-drift').sort());
    await page.screenshot({ path: 'test-results/screens/trips-bad-filter.png', fullPage: false });
  });
});
