import { expect, test } from '@playwright/test';
import { DEMO_PASSWORD, storageStatePath } from './accounts';

test('the operator signs in through the form and sees the Fleet with the three demo spacecraft', async ({ page }) => {
  await page.goto('/');
  await expect(page).toHaveURL(/\/sign-in\?next=%2F/);
  await page.getByLabel('E-mail').fill('operator@millrace.test');
  await page.getByLabel('Password').fill(DEMO_PASSWORD);
  await page.getByRole('button', { name: 'Sign in' }).click();
  await expect(page.getByRole('heading', { name: 'Fleet', level: 1 })).toBeVisible();
  for (const key of ['MR-1', 'MR-2', 'MR-3']) {
    await expect(page.getByRole('article', { name: `Spacecraft ${key}` })).toBeVisible();
  }
  // Three orthogonal loops on the third spacecraft.
  await expect(page.getByRole('article', { name: 'Spacecraft MR-3' }).getByRole('row')).toHaveCount(4);
  // The operator's navigation does not offer admin pages.
  await expect(page.getByRole('navigation', { name: 'Administration' })).toHaveCount(0);
  await page.screenshot({ path: 'test-results/screens/fleet-operator.png', fullPage: true });
});

test('a wrong password is refused with a message on the form', async ({ page }) => {
  await page.goto('/sign-in');
  await page.getByLabel('E-mail').fill('analyst@millrace.test');
  await page.getByLabel('Password').fill('not-the-password');
  await page.getByRole('button', { name: 'Sign in' }).click();
  await expect(page.getByRole('alert')).toContainText('E-mail or password is wrong');
});

test.describe('as the analyst', () => {
  test.use({ storageState: storageStatePath('analyst') });
  test('an admin page is refused with a 403 page', async ({ page }) => {
    const res = await page.goto('/admin/people');
    expect(res?.status()).toBe(403);
    await expect(page.getByRole('heading', { name: 'Your roles do not open this page' })).toBeVisible();
    await page.screenshot({ path: 'test-results/screens/analyst-forbidden.png', fullPage: true });
  });
});

test('the admin sees People, and sign-out ends that session', async ({ page }) => {
  // A session of its own: signing out must not end the shared admin session other specs use.
  await page.goto('/sign-in?next=/admin/people');
  await page.getByLabel('E-mail').fill('admin@millrace.test');
  await page.getByLabel('Password').fill(DEMO_PASSWORD);
  await page.getByRole('button', { name: 'Sign in' }).click();
  await expect(page.getByRole('cell', { name: 'engineer2@millrace.test' })).toBeVisible();
  await page.getByRole('button', { name: 'Sign out' }).click();
  await expect(page).toHaveURL(/\/sign-in/);
  await page.goto('/admin/people');
  await expect(page).toHaveURL(/\/sign-in/);
});
