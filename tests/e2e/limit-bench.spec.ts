import fs from 'node:fs';
import { expect, test, type Page } from '@playwright/test';
import { DEMO_PASSWORD, ROLE_ACCOUNTS, type DemoRole } from './accounts';
import { db } from '../../src/lib/server/db';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { insertLimitSet } from '../../src/lib/server/limit-sets';
import { DEFAULT_RULES } from '../../src/lib/limits/defaults';
import { spacecraftSheetSchema } from '../../src/lib/spacecraft-sheet.schema';
import { insertSyntheticHistory } from '../../scripts/bench-backtest';

const SCREENS = 'test-results/screens';
const KEY = 'LB-E2E';
const shot = (page: Page, name: string) => page.screenshot({ path: `${SCREENS}/${name}.png`, fullPage: true });

/** A session of its own per test, so that another spec signing out a shared stored session cannot end it. */
async function signIn(page: Page, role: DemoRole) {
  const res = await page.request.post('/api/auth/sign-in', { data: { email: ROLE_ACCOUNTS[role], password: DEMO_PASSWORD } });
  expect(res.ok()).toBe(true);
}

// A spacecraft of its own with 30 days of derived history (so the backtest has real work and the
// progress bar moves), removed again afterwards so that the other specs see the demo fleet only.
test.beforeAll(async () => {
  test.setTimeout(120_000);
  await db.deleteFrom('spacecraft').where('key', '=', KEY).execute();
  const base = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync('ingest/fleet/MR-3.json', 'utf8')));
  const sheet = { ...base, spacecraft: { key: KEY, name: 'Limit bench test craft' }, effectiveFrom: '2026-01-01T00:00:00Z' };
  const sc = await db.transaction().execute(async (trx) => {
    const created = await insertSpacecraftWithSheet(trx, sheet, null);
    await insertLimitSet(trx, created.id, { name: 'Default limits', notes: '', rules: DEFAULT_RULES }, null, 'active');
    return created;
  });
  await insertSyntheticHistory(db, sc.id, sheet.loops.map((l) => l.id), Math.floor(Date.now() / 3600_000) * 3600_000 - 3600_000, 30);
});

test.afterAll(async () => {
  await db.deleteFrom('spacecraft').where('key', '=', KEY).execute();
});

test.describe.serial('Limit bench', () => {
  test('the engineer edits a draft with field errors, backtests it with a progress bar, and submits it for review', async ({ page }) => {
    test.setTimeout(120_000);
    await signIn(page, 'engineer');
    await page.goto('/');
    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Limit bench' }).click();
    await expect(page.getByRole('heading', { name: 'Limit bench', level: 1 })).toBeVisible();
    await page.getByRole('link', { name: `Limit bench of ${KEY}` }).click();
    await expect(page).toHaveURL(new RegExp(`/limits/${KEY}`));

    await page.getByRole('button', { name: 'New draft from v1' }).click();
    const form = page.getByRole('form', { name: 'Limits of v2' });
    await expect(form).toBeVisible();
    await expect(page.getByRole('navigation', { name: 'Limit set versions' }).getByRole('button', { name: /v2.*draft/ })).toBeVisible();
    await expect(form.getByRole('listitem', { name: /^Limit \d+$/ })).toHaveCount(DEFAULT_RULES.length);

    // A caution level outside its warning level is refused on its field.
    await form.getByLabel('Limit 1 caution low').fill('0.4');
    await form.getByRole('button', { name: 'Save draft' }).click();
    const limit1 = form.getByRole('listitem', { name: 'Limit 1', exact: true });
    await expect(limit1.getByText('the low caution level must lie inside (above) the low warning level')).toBeVisible();
    await expect(form.getByLabel('Limit 1 caution low')).toHaveAttribute('aria-invalid', 'true');
    await shot(page, 'limit-bench-field-error');

    // Tighten the effectiveness limit, drop the last limit, add a resistance limit.
    await form.getByLabel('Limit 1 caution low').fill('0.62');
    await form.getByLabel('Limit 1 warning low').fill('0.5');
    await form.getByLabel('Limit 1 clear low').fill('0.64');
    await form.getByRole('button', { name: `Remove limit ${DEFAULT_RULES.length}` }).click();
    await form.getByRole('button', { name: 'Add limit' }).click();
    const added = `Limit ${DEFAULT_RULES.length}`;
    await form.getByLabel(`${added} quantity`).selectOption('resistance_ohm');
    await form.getByLabel(`${added} caution high`).fill('0.0115');
    await form.getByLabel(`${added} warning high`).fill('0.013');
    await form.getByLabel(`${added} persistence`).fill('5');
    await form.getByRole('textbox', { name: `${added} rationale` }).fill('Bench: 5 % above the electrode circuit’s usual resistance');
    await form.getByRole('button', { name: 'Save draft' }).click();
    await expect(form.getByRole('status')).toHaveText('Draft saved.');
    await expect(limit1.getByText(/must lie inside/)).toHaveCount(0);
    const diff = page.getByRole('region', { name: 'Changes against v1 (active)' });
    await expect(diff.getByText('1 added · 1 removed · 1 changed · 8 unchanged')).toBeVisible();
    await expect(diff.getByRole('list', { name: 'Differences' })).toContainText('caution low 0.55 → 0.62');

    // The backtest runs in the background; the bar follows its progress to 100 %.
    await page.evaluate(() => {
      const seen: number[] = [];
      (window as unknown as { seenProgress: number[] }).seenProgress = seen;
      new MutationObserver(() => {
        const bar = document.querySelector('[role="progressbar"][aria-label="Backtest progress"]');
        const v = Number(bar?.getAttribute('aria-valuenow'));
        if (bar && seen[seen.length - 1] !== v) seen.push(v);
      }).observe(document.body, { subtree: true, childList: true, attributes: true, attributeFilter: ['aria-valuenow'] });
    });
    const backtest = page.getByRole('region', { name: 'Backtest', exact: true });
    await backtest.getByRole('button', { name: 'Run backtest' }).click();
    const bar = backtest.getByRole('progressbar', { name: 'Backtest progress' });
    await expect(bar).toBeVisible();
    await shot(page, 'limit-bench-backtest-running');
    await expect(bar).toHaveAttribute('aria-valuenow', '100', { timeout: 90_000 });
    await expect(backtest.getByText('Done 100 %')).toBeVisible();
    const seen = await page.evaluate(() => (window as unknown as { seenProgress: number[] }).seenProgress);
    expect(seen[seen.length - 1]).toBe(100);
    expect(seen.some((v) => v < 100), `progress values ${seen.join(', ')}`).toBe(true);
    for (let i = 1; i < seen.length; i++) expect(seen[i]!).toBeGreaterThanOrEqual(seen[i - 1]!);

    // Side by side: the draft's trips and the active set's, in a table and on the chart.
    await expect(backtest.getByRole('status')).toContainText(/Draft v2 would have raised \d+ trips? against \d+ under Active v1/);
    const trips = backtest.getByRole('table', { name: 'Backtest trips' });
    await expect(trips.getByRole('row', { name: /Active v1/ }).first()).toBeVisible();
    // The chart opens on the draft's first limit that trips (effectiveness, loop 0, with its sag); the table follows it on request.
    await expect(backtest.getByLabel('Quantity on the chart')).toHaveValue('effectiveness|0');
    await backtest.getByLabel('only Effectiveness (kT / ideal) on L0').check();
    await expect(trips.getByRole('row', { name: /^v2 Effectiveness.*L0/ }).first()).toBeVisible();
    await expect(trips.getByRole('row', { name: /^Active v1 Effectiveness.*L0/ }).first()).toBeVisible();
    const perLimit = backtest.getByRole('table', { name: 'Trips per limit' });
    await expect(perLimit.getByRole('row', { name: /Electrode-circuit resistance/ })).toBeVisible();
    await expect(backtest.getByRole('figure', { name: /Chart of/ }).locator('canvas')).toBeVisible();
    await backtest.getByRole('figure', { name: /Chart of/ }).scrollIntoViewIfNeeded();
    await shot(page, 'limit-bench-backtest-done');

    // Submit for review; the author cannot approve it.
    const review = page.getByRole('region', { name: 'Review', exact: true });
    await review.getByLabel('Note to the reviewer (optional)').fill('Earlier caution on effectiveness; resistance limit added. Backtested over 30 days.');
    await review.getByRole('button', { name: 'Submit for review' }).click();
    await expect(page.getByRole('region', { name: 'Limit set v2', exact: true }).getByText('in review', { exact: true })).toBeVisible();
    await expect(review.getByText(/Waiting for a different engineer or an admin/)).toBeVisible();
    await expect(review.getByRole('button', { name: 'Approve and activate' })).toHaveCount(0);
    await expect(review.getByRole('list', { name: 'Review trail' })).toContainText('Submitted by Mateo Brandt');
    await expect(form.getByRole('button', { name: 'Save draft' })).toHaveCount(0);
    await shot(page, 'limit-bench-submitted');
  });

  test('the second engineer reads the backtest and approves: v2 becomes active and v1 retires', async ({ page }) => {
    await signIn(page, 'engineer2');
    await page.goto(`/limits/${KEY}`);
    const set = page.getByRole('region', { name: 'Limit set v2', exact: true });
    await expect(set.getByText('in review', { exact: true })).toBeVisible();
    const backtest = page.getByRole('region', { name: 'Backtest', exact: true });
    await expect(backtest.getByRole('table', { name: 'Backtest trips' })).toBeVisible();
    const review = page.getByRole('region', { name: 'Review', exact: true });
    await expect(review.getByRole('list', { name: 'Review trail' })).toContainText('Earlier caution on effectiveness');
    await review.getByLabel('Comments (needed to return it)').fill('Checked the backtest: the earlier caution trips only on the sag. Approved.');
    await review.getByRole('button', { name: 'Approve and activate' }).click();
    await expect(set.getByText('active', { exact: true })).toBeVisible();
    await expect(review.getByRole('list', { name: 'Review trail' })).toContainText('Approved by Yuki Adeyemi');
    // Nothing had judged this craft's limits live yet, so nothing carries on and no trip is closed.
    await expect(review.getByRole('status')).toHaveText(/Handover done: 0 limit checks carry on from the retired set; no trip of the retired set was live\./);
    const versions = page.getByRole('navigation', { name: 'Limit set versions' });
    await expect(versions.getByRole('button', { name: /v2.*active/ })).toBeVisible();
    await expect(versions.getByRole('button', { name: /v1.*retired/ })).toBeVisible();
    await shot(page, 'limit-bench-approved');
    await versions.getByRole('button', { name: /v1.*retired/ }).click();
    await expect(page.getByRole('region', { name: 'Limit set v1', exact: true }).getByText('retired', { exact: true })).toBeVisible();
  });
});
