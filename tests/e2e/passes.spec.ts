import { expect, test, type Page } from '@playwright/test';
import { DEMO_PASSWORD, ROLE_ACCOUNTS, type DemoRole } from './accounts';

const shot = (page: Page, name: string) => page.screenshot({ path: `test-results/screens/${name}.png`, fullPage: true });

/** A session of its own per test, so that another spec signing out a shared stored session cannot end it. */
function signedInAs(role: DemoRole) {
  test.beforeEach(async ({ page }) => {
    const res = await page.request.post('/api/auth/sign-in', { data: { email: ROLE_ACCOUNTS[role], password: DEMO_PASSWORD } });
    expect(res.ok()).toBe(true);
  });
}

/** The number in "N upcoming passes in the next 3 days". */
async function upcomingCount(page: Page): Promise<number> {
  const text = await page.getByTestId('upcoming-count').innerText();
  const m = /^(\d+) upcoming pass/.exec(text);
  if (!m) throw new Error(`no count in "${text}"`);
  return Number(m[1]);
}

/** Maximum elevations (°) shown in the Upcoming table. */
async function upcomingMaxElevations(page: Page): Promise<number[]> {
  const cells = page.getByRole('table', { name: 'Upcoming passes' }).locator('tbody tr td:nth-child(7)');
  return (await cells.allInnerTexts()).map((t) => Number.parseFloat(t));
}

test.describe('as the operator', () => {
  signedInAs('operator');

  test('opens Passes and sees the 24 h timeline, the upcoming passes and the past ones', async ({ page }) => {
    await page.goto('/');
    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Passes' }).click();
    await expect(page.getByRole('heading', { name: 'Passes', level: 1 })).toBeVisible();

    const timeline = page.getByRole('region', { name: 'Timeline of the next 24 hours' });
    await expect(timeline).toBeVisible();
    for (const key of ['MR-1', 'MR-2', 'MR-3']) {
      const lane = timeline.getByRole('group', { name: `Lane of ${key}` });
      await expect(lane).toBeVisible();
      expect(await lane.getByRole('button', { name: new RegExp(`^${key} over `) }).count(), key).toBeGreaterThan(5);
    }
    await expect(timeline.getByTestId('timeline-now')).toBeVisible();
    await expect(timeline.getByText(/^now \d\d:\d\d UTC$/)).toBeVisible();

    const upcoming = page.getByRole('table', { name: 'Upcoming passes' });
    await expect(upcoming.locator('tbody tr').first()).toBeVisible();
    expect(await upcomingCount(page)).toBeGreaterThan(100);
    await expect(page.getByRole('table', { name: 'Past passes' }).locator('tbody tr').first()).toBeVisible();
    await shot(page, 'passes-operator');

    // A bar of the timeline opens the pass.
    await timeline.getByRole('group', { name: 'Lane of MR-1' }).getByRole('button').first().click();
    const chosen = page.getByRole('region', { name: 'Selected pass' });
    await expect(chosen).toContainText('MR-1 over');
    await expect(chosen).toContainText('Max elevation');

    // A past pass says what arrived through its station (nothing, in a fresh demo without the feed).
    const past = page.getByRole('table', { name: 'Past passes' });
    await past.getByRole('button', { name: /^What arrived in / }).first().click();
    await expect(past.getByText('Received through this station between AOS and LOS')).toBeVisible();
    await expect(past.getByText('Sequence gaps that ended in the pass:')).toBeVisible();

    // Filters narrow the lanes and the lists.
    await page.getByLabel('Spacecraft', { exact: true }).selectOption('MR-2');
    await expect(page).toHaveURL(/\?spacecraft=MR-2$/);
    await expect(timeline.getByRole('group', { name: 'Lane of MR-1' })).toHaveCount(0);
    const spacecraftCells = await upcoming.locator('tbody tr td:first-child').allInnerTexts();
    expect(new Set(spacecraftCells)).toEqual(new Set(['MR-2']));
    await shot(page, 'passes-mr2');
  });
});

test.describe('as an engineer', () => {
  signedInAs('engineer');

  test('edits a station mask and sees its passes change', async ({ page }) => {
    await page.goto('/passes?station=isbre-point');
    await expect(page.getByRole('table', { name: 'Upcoming passes' }).locator('tbody tr').first()).toBeVisible();
    const before = await upcomingCount(page);
    expect(Math.min(...(await upcomingMaxElevations(page)))).toBeLessThan(30);

    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Stations' }).click();
    await expect(page.getByRole('heading', { name: 'Ground stations', level: 1 })).toBeVisible();
    await page.getByRole('button', { name: 'Edit isbre-point' }).click();
    const form = page.getByRole('form', { name: 'Edit ground station isbre-point' });
    const mask = form.getByLabel('Elevation mask (°)');
    await expect(mask).toHaveValue('5');

    // Out of range: the field says so and nothing is sent.
    await mask.fill('50');
    await form.getByRole('button', { name: 'Save' }).click();
    await expect(form.getByText('Elevation mask must be from 0 to 45 °.')).toBeVisible();
    await expect(mask).toHaveAttribute('aria-invalid', 'true');
    await shot(page, 'stations-field-error');

    await mask.fill('30');
    await form.getByRole('button', { name: 'Save' }).click();
    await expect(page.getByRole('status')).toContainText('Saved isbre-point. Passes recomputed:');
    const row = page.getByRole('table', { name: 'Ground stations' }).getByRole('row').filter({ hasText: 'isbre-point' });
    await expect(row).toContainText('30.0');
    await shot(page, 'stations-after-edit');

    // The server checks too, and its field errors land on the field: a key that is taken.
    const add = page.getByRole('form', { name: 'Add a ground station' });
    await add.getByLabel('Key').fill('ribeira');
    await add.getByLabel('Name').fill('Second Ribeira');
    await add.getByLabel('Latitude (°)').fill('41');
    await add.getByLabel('Longitude (°)').fill('-8');
    await add.getByRole('button', { name: 'Add station' }).click();
    await expect(add.getByText('ribeira is taken: choose another key.')).toBeVisible();

    await row.getByRole('link', { name: 'Passes over isbre-point' }).click();
    await expect(page.getByRole('table', { name: 'Upcoming passes' }).locator('tbody tr').first()).toBeVisible();
    const after = await upcomingCount(page);
    expect(after).toBeLessThan(before);
    expect(after).toBeGreaterThan(0);
    expect(Math.min(...(await upcomingMaxElevations(page)))).toBeGreaterThanOrEqual(30);
    await shot(page, 'passes-after-mask-edit');

    // Put the demo station back as it was.
    const res = await page.request.patch('/api/stations/isbre-point', { data: { elevation_mask_deg: 5 } });
    expect(res.status()).toBe(200);
  });
});
