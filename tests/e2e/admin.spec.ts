import { randomBytes } from 'node:crypto';
import { expect, test, type Browser, type Page } from '@playwright/test';
import { sql } from 'kysely';
import { DEMO_PASSWORD, ROLE_ACCOUNTS, type DemoRole } from './accounts';
import { db } from '../../src/lib/server/db';
import { config } from '../../src/lib/server/config';
import { insertUser } from '../../src/lib/server/users';
import { insertSheet, insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { loadDemoSheets } from '../../src/lib/server/seed';
import { spacecraftSheetSchema } from '../../src/lib/spacecraft-sheet.schema';

const SCREENS = 'test-results/screens';
const shot = (page: Page, name: string) => page.screenshot({ path: `${SCREENS}/${name}.png`, fullPage: true });
const tag = randomBytes(3).toString('hex');
const email = (what: string) => `e2e-${what}-${tag}@millrace.test`;
const SHEETS_KEY = `E2E-${tag.toUpperCase()}`;

/** A session of its own per test, so that another spec signing out a shared stored session cannot end it. */
function signedInAs(role: DemoRole) {
  test.beforeEach(async ({ page }) => {
    const res = await page.request.post('/api/auth/sign-in', { data: { email: ROLE_ACCOUNTS[role], password: DEMO_PASSWORD } });
    expect(res.ok()).toBe(true);
  });
}

/** The link of the newest mail of a kind to an address, as the outbox holds it. */
async function linkInOutbox(to: string, kind: string): Promise<string> {
  const row = await db
    .selectFrom('outbox')
    .select('text_body')
    .where(sql<boolean>`${to} = ANY(to_addresses)`)
    .where('kind', '=', kind)
    .orderBy('id', 'desc')
    .executeTakeFirstOrThrow();
  const m = /(https?:\/\/\S+\/(?:invite|reset-password)\/[A-Za-z0-9_-]+)/.exec(row.text_body);
  if (!m) throw new Error(`no link in the ${kind} mail to ${to}`);
  return m[1]!.replace(config().PUBLIC_URL.replace(/\/+$/, ''), '');
}

async function freshPage(browser: Browser): Promise<Page> {
  const context = await browser.newContext();
  return context.newPage();
}

test.afterAll(async () => {
  await db.deleteFrom('app_user').where('email', 'like', `e2e-%-${tag}@millrace.test`).execute();
  await db.deleteFrom('spacecraft').where('key', '=', SHEETS_KEY).execute();
});

test.describe('as the admin', () => {
  signedInAs('admin');

  test('invites someone, who sets a password through the mailed link and signs in; then changes their roles', async ({ page, browser }) => {
    await page.setViewportSize({ width: 1440, height: 1000 });
    const invitee = email('invitee');
    await page.goto('/');
    await page.getByRole('navigation', { name: 'Administration' }).getByRole('link', { name: 'People' }).click();
    await expect(page.getByRole('heading', { name: 'People', level: 1 })).toBeVisible();

    const form = page.getByRole('form', { name: 'Invite someone' });
    await form.getByLabel('Name').fill('Odile Invitee');
    await form.getByLabel('E-mail').fill(invitee);
    await form.getByRole('button', { name: 'Send invitation' }).click();
    // No role chosen: the form says so and sends nothing.
    await expect(form.getByText('Give at least one role.')).toBeVisible();
    await form.getByRole('checkbox', { name: /^analyst/ }).check();
    await form.getByRole('button', { name: 'Send invitation' }).click();
    await expect(page.getByRole('status')).toContainText(`Invitation to ${invitee} is in the Outbox`);
    const row = page.getByRole('row', { name: new RegExp(invitee) });
    await expect(row).toContainText('invited');
    await expect(row).toContainText('analyst');
    await shot(page, 'people-invited');

    // The invitee opens the link from the mail in a browser of their own.
    const link = await linkInOutbox(invitee, 'invitation');
    const guest = await freshPage(browser);
    await guest.goto(link);
    await expect(guest.getByRole('heading', { name: 'Set your password' })).toBeVisible();
    await expect(guest.getByText('Welcome, Odile Invitee.')).toBeVisible();
    await guest.getByLabel('New password', { exact: true }).fill('odile-first-pass');
    await guest.getByLabel('New password again').fill('odile-first-pass');
    await shot(guest, 'invite-set-password');
    await guest.getByRole('button', { name: 'Set password' }).click();
    await expect(guest.getByRole('status')).toContainText('Your password is set');
    await guest.getByRole('link', { name: 'Sign in' }).click();
    await guest.getByLabel('E-mail').fill(invitee);
    await guest.getByLabel('Password').fill('odile-first-pass');
    await guest.getByRole('button', { name: 'Sign in' }).click();
    await expect(guest.getByRole('heading', { name: 'Fleet', level: 1 })).toBeVisible();
    await expect(guest.getByText('Odile Invitee')).toBeVisible();

    // The admin sees the account active and makes the person an engineer instead of an analyst.
    await page.reload();
    await expect(row).toContainText('active');
    await row.getByRole('button', { name: 'Change roles of Odile Invitee' }).click();
    const roles = page.getByRole('form', { name: 'Roles of Odile Invitee' });
    await roles.getByRole('checkbox', { name: /^analyst/ }).uncheck();
    await roles.getByRole('button', { name: 'Save roles' }).click();
    await expect(roles.getByText('Keep at least one role')).toBeVisible();
    await roles.getByRole('checkbox', { name: /^engineer/ }).check();
    await shot(page, 'people-roles');
    await roles.getByRole('button', { name: 'Save roles' }).click();
    await expect(roles).toHaveCount(0);
    await expect(row.getByRole('cell').nth(2)).toHaveText('engineer');

    // The invitee's next request already carries the new role.
    await guest.reload();
    await expect(guest.getByText('engineer', { exact: false }).first()).toBeVisible();
    const me = await guest.request.get('/api/me');
    expect((await me.json()).user.roles).toEqual(['engineer']);

    // Disabling ends the invitee's session at once.
    await row.getByRole('button', { name: 'Disable Odile Invitee' }).click();
    await page.getByRole('group', { name: 'Confirm disabling Odile Invitee' }).getByRole('button', { name: 'Yes, disable' }).click();
    await expect(page.getByRole('status')).toContainText('Odile Invitee is disabled; 1 session ended.');
    await expect(row).toContainText('disabled');
    expect((await guest.request.get('/api/me')).status()).toBe(401);

    // Every change is in the audit log.
    await page.getByRole('navigation', { name: 'Administration' }).getByRole('link', { name: 'Audit log' }).click();
    const filters = page.getByRole('form', { name: 'Filter the audit log' });
    await filters.getByLabel('Target type').selectOption('user');
    await filters.getByRole('button', { name: 'Show' }).click();
    const log = page.getByRole('table', { name: 'Audit log' });
    await expect(log.getByRole('row', { name: /user\.roles/ }).first()).toContainText('[analyst] → [engineer]');
    await expect(log.getByRole('row', { name: /user\.invite-accept/ }).first()).toContainText('Odile Invitee');
    await expect(log.getByRole('row', { name: /user\.disable/ }).first()).toContainText('sessionsEnded: 1');
    await expect(page).toHaveURL(/targetType=user/);
    await shot(page, 'audit-log');
    await guest.context().close();
  });

  test('reads the API description', async ({ page }) => {
    await page.goto('/docs/api');
    await expect(page.getByRole('heading', { name: 'Millrace API', level: 1 })).toBeVisible();
    const ingest = page.getByRole('article', { name: 'POST /api/ingest' });
    await expect(ingest).toContainText('application/octet-stream');
    await expect(page.getByRole('article', { name: 'Schema SpacecraftSheet' })).toContainText('massProperties');
    await page.getByRole('navigation', { name: 'API contents' }).getByRole('link', { name: /get\s*\/trips$/i }).click();
    await expect(page.getByRole('article', { name: 'GET /api/trips', exact: true })).toContainText('pageSize');
    await page.screenshot({ path: `${SCREENS}/api-docs.png` });
  });
});

test.describe('a person of their own', () => {
  test('changes their password: the current one is required, then the new one signs in', async ({ page, browser }) => {
    const who = email('changer');
    await insertUser(db, { email: who, name: 'Pia Changer', password: 'pia-old-password', roles: ['operator'] });
    await page.goto('/sign-in');
    await page.getByLabel('E-mail').fill(who);
    await page.getByLabel('Password').fill('pia-old-password');
    await page.getByRole('button', { name: 'Sign in' }).click();
    await expect(page.getByRole('heading', { name: 'Fleet', level: 1 })).toBeVisible();
    // A second session elsewhere, which the change ends.
    const other = await freshPage(browser);
    expect((await other.request.post('/api/auth/sign-in', { data: { email: who, password: 'pia-old-password' } })).ok()).toBe(true);

    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Account' }).click();
    const form = page.getByRole('form', { name: 'Change your password' });
    await form.getByLabel('Current password').fill('not-my-password');
    await form.getByLabel('New password', { exact: true }).fill('pia-new-password-2');
    await form.getByLabel('New password again').fill('pia-new-password-2');
    await form.getByRole('button', { name: 'Change password' }).click();
    await expect(form.getByLabel('Current password')).toHaveAttribute('aria-invalid', 'true');
    await expect(form.getByText('That is not your current password.')).toBeVisible();
    await shot(page, 'account-wrong-current');

    await form.getByLabel('Current password').fill('pia-old-password');
    await form.getByLabel('New password', { exact: true }).fill('short');
    await form.getByLabel('New password again').fill('short');
    await form.getByRole('button', { name: 'Change password' }).click();
    await expect(form.getByText('Use at least 10 characters.')).toBeVisible();

    await form.getByLabel('New password', { exact: true }).fill('pia-new-password-2');
    await form.getByLabel('New password again').fill('pia-new-password-2');
    await form.getByRole('button', { name: 'Change password' }).click();
    await expect(form.getByRole('status')).toContainText('Your password is changed. 1 other session of your account ended');
    await shot(page, 'account-password-changed');

    expect((await other.request.get('/api/me')).status()).toBe(401);
    await page.reload();
    await expect(page.getByRole('heading', { name: 'Your account', level: 1 })).toBeVisible();
    const fresh = await freshPage(browser);
    expect((await fresh.request.post('/api/auth/sign-in', { data: { email: who, password: 'pia-old-password' } })).status()).toBe(401);
    expect((await fresh.request.post('/api/auth/sign-in', { data: { email: who, password: 'pia-new-password-2' } })).ok()).toBe(true);
    await other.context().close();
    await fresh.context().close();
  });

  test('asks for a reset link from the sign-in page and is told the same as anyone', async ({ page }) => {
    await page.goto('/sign-in');
    await page.getByRole('link', { name: 'Forgot your password?' }).click();
    await expect(page.getByRole('heading', { name: 'Forgot your password?' })).toBeVisible();
    await page.getByLabel('E-mail').fill(email('nobody'));
    await page.getByRole('button', { name: 'Send the link' }).click();
    await expect(page.getByRole('status')).toContainText('If an account uses that address');
    await shot(page, 'forgot-password');
  });
});

test.describe('as an engineer', () => {
  signedInAs('engineer');

  test('the sheet history shows what the newer sheet changed and the ideal-kT caution', async ({ page }) => {
    const day = 86_400_000;
    const iso = (ms: number) => new Date(Math.floor(ms / 1000) * 1000).toISOString().replace('.000Z', 'Z');
    const [demo] = loadDemoSheets();
    const first = spacecraftSheetSchema.parse({ ...demo, spacecraft: { key: SHEETS_KEY, name: 'Diff Pathfinder' }, effectiveFrom: iso(Date.now() - 40 * day) });
    const sc = await insertSpacecraftWithSheet(db, first, null);
    const second = structuredClone(first);
    second.effectiveFrom = iso(Date.now() - 10 * day);
    second.loops[0]!.pumpStations[0]!.field_T = 0.43;
    second.loops[0]!.ratedCurrent_A = 28;
    second.massProperties.mass_kg = 12.9;
    second.massProperties.inertia_kg_m2[0]![1] = 0.0031;
    second.massProperties.inertia_kg_m2[1]![0] = 0.0031;
    await insertSheet(db, sc.id, spacecraftSheetSchema.parse(second), null);

    await page.setViewportSize({ width: 1440, height: 1000 });
    await page.goto(`/spacecraft/${SHEETS_KEY}/sheets`);
    const changes = page.getByRole('region', { name: 'Changes from the previous sheet' });
    await expect(changes.getByRole('note', { name: 'Ideal torque constant changes' })).toContainText('caution · ideal torque constant moves by more than 3 %');
    await expect(changes.getByRole('table', { name: 'Element' })).toContainText('Ixy');
    await expect(changes.getByRole('table', { name: 'Changes of loop L0' })).toContainText('pumpStations[0].field_T');
    await expect(page.getByRole('row', { name: /mass, inertia, L0 changed/ })).toContainText('L0 ideal kT +7.5 %');
    await shot(page, 'sheets-diff');

    // The earliest sheet has nothing to compare with.
    await page.getByRole('button', { name: new RegExp(first.effectiveFrom.slice(0, 10)) }).click();
    await expect(changes).toContainText('This is the earliest sheet on record');
  });
});
