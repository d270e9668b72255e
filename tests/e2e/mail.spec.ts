import { expect, test, type Page } from '@playwright/test';
import { DEMO_PASSWORD, ROLE_ACCOUNTS, type DemoRole } from './accounts';
import { startRelay, type Relay } from '../../fakes/smtp-relay';
import { db } from '../../src/lib/server/db';
import { config } from '../../src/lib/server/config';
import { createMailTransport } from '../../src/lib/server/mail/transport';
import { sendDueMail } from '../../src/lib/server/mail/outbox';
import { enqueueTripMail } from '../../src/lib/server/mail/trip-mail';
import { findSpacecraftByKey } from '../../src/lib/server/spacecraft';

// The launcher does not start the relay in test mode: this spec runs its own on SMTP_PORT (2599
// in tests), storing into MAILBOX_DIR, which the server's Mailbox reads.
let relay: Relay;

/** A session of its own per test: another spec signing out a shared stored session cannot end it. */
function signedInAs(role: DemoRole) {
  test.beforeEach(async ({ page }: { page: Page }) => {
    const res = await page.request.post('/api/auth/sign-in', { data: { email: ROLE_ACCOUNTS[role], password: DEMO_PASSWORD } });
    expect(res.ok()).toBe(true);
  });
}
/** A trip row of MR-2 made for this spec (mail rows reference their trip). */
let TRIP_ID: number;

test.beforeAll(async () => {
  const c = config();
  relay = await startRelay({ port: c.SMTP_PORT, dir: c.MAILBOX_DIR });
  const sc = (await findSpacecraftByKey(db, 'MR-2'))!;
  const now = new Date();
  TRIP_ID = (
    await db
      .insertInto('trip')
      .values({ spacecraft_id: sc.id, loop_id: 1, kind: 'channel-limit', quantity: 'electrode_temp_c', level: 'warning', side: 'high', limit_set_version: 2, onset_at: now, raised_at: now, value: 212.4, peak_value: 212.4, limit_value: 200, last_value: 212.4, last_at: now, cleared_at: now, state: 'resolved', resolved_at: now, resolution: 'Mail spec fixture.', evidence: '{}' })
      .returning('id')
      .executeTakeFirstOrThrow()
  ).id;
  await db.transaction().execute((trx) =>
    enqueueTripMail(
      trx,
      {
        tripId: TRIP_ID,
        event: 'opened',
        kind: 'limit',
        level: 'warning',
        spacecraftKey: sc.key,
        spacecraftId: sc.id,
        loopId: 1,
        quantity: 'electrode_temp_c',
        quantityLabel: 'Electrode temperature',
        unit: '°C',
        value: 212.4,
        limit: 200,
        limitSide: 'high',
        at: now,
        limitSetVersion: 2,
      },
      now,
    ),
  );
  const report = await sendDueMail(db, createMailTransport(), now);
  if (report.sent < 1) throw new Error(`the trip message did not reach the test relay: ${JSON.stringify(report)}`);
});

test.afterAll(async () => {
  await relay?.close();
  if (TRIP_ID) await db.deleteFrom('trip').where('id', '=', TRIP_ID).execute();
});

test.describe('as the admin', () => {
  signedInAs('admin');

  test('Mailbox shows the trip message the relay caught, as HTML in a sandboxed frame and as plain text', async ({ page }) => {
    await page.setViewportSize({ width: 1280, height: 1100 });
    await page.goto('/');
    await page.getByRole('navigation', { name: 'Administration' }).getByRole('link', { name: 'Mailbox' }).click();
    await expect(page.getByRole('heading', { name: 'Mailbox', level: 1 })).toBeVisible();
    const item = page.getByRole('list', { name: 'Messages' }).getByRole('button', { name: /WARNING · MR-2 L1 electrode temperature 212\.4 °C/ }).first();
    await item.click();
    await expect(item).toHaveAttribute('aria-pressed', 'true');
    const message = page.getByRole('article', { name: /Message \[Millrace\] WARNING · MR-2 L1/ });
    await expect(message.getByRole('heading', { name: /WARNING · MR-2 L1 electrode temperature/ })).toBeVisible();
    const frame = page.frameLocator('iframe[title^="HTML of"]');
    await expect(frame.getByRole('heading', { name: /WARNING trip opened on MR-2, loop L1/ })).toBeVisible();
    await expect(frame.getByRole('link', { name: `Open trip ${TRIP_ID} in Millrace` })).toHaveAttribute('href', `${config().PUBLIC_URL}/trips/${TRIP_ID}`);
    await expect(page.locator('iframe[title^="HTML of"]').first()).toHaveAttribute('sandbox', '');
    const text = message.getByRole('region', { name: 'Plain text part' });
    await expect(text).toContainText('212.4 °C, above the high limit by 12.4 °C');
    await expect(text).toContainText("they do not replace the mission's flight rules");
    await expect(text.getByRole('link', { name: `${config().PUBLIC_URL}/trips/${TRIP_ID}` })).toBeVisible();
    // A viewport capture: a full-page one repaints the page but not the sandboxed frame.
    await page.screenshot({ path: 'test-results/screens/mailbox.png' });
  });

  test('Outbox lists the sent trip message with its attempts', async ({ page }) => {
    await page.goto('/admin/outbox');
    const row = page.getByRole('row', { name: /WARNING · MR-2 L1 electrode temperature/ }).first();
    await expect(row).toContainText('sent');
    await expect(row.getByRole('cell').nth(5)).toHaveText('1');
    await page.screenshot({ path: 'test-results/screens/outbox.png', fullPage: true });
  });
});

test.describe('as the operator', () => {
  signedInAs('operator');

  test('adds an on-call shift after a field error, and removes it', async ({ page }) => {
    await page.goto('/');
    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'On call' }).click();
    await expect(page.getByRole('heading', { name: 'On call', level: 1 })).toBeVisible();
    await page.getByRole('link', { name: 'Roster of MR-1' }).click();
    await expect(page).toHaveURL(/\/roster\/MR-1$/);
    const form = page.getByRole('form', { name: 'Add a shift to the roster of MR-1' });
    const day = new Date(Math.ceil(Date.now() / 86_400_000) * 86_400_000 + 86_400_000).toISOString().slice(0, 10);

    await form.getByLabel('Who').selectOption({ label: 'Mateo Brandt (engineer)' });
    await form.getByLabel('From (UTC)').fill(`${day} 08:00`);
    await form.getByLabel('To (UTC)').fill(`${day} 06:00`);
    await form.getByRole('button', { name: 'Add to roster' }).click();
    const to = form.getByLabel('To (UTC)');
    await expect(to).toHaveAttribute('aria-invalid', 'true');
    await expect(to).toHaveAccessibleDescription('"To" must be after "From".');
    await page.screenshot({ path: 'test-results/screens/roster-field-error.png', fullPage: true });

    await to.fill(`${day} 20:00`);
    await form.getByRole('button', { name: 'Add to roster' }).click();
    await expect(form.getByRole('status')).toContainText(`Mateo Brandt is on the roster ${day} 08:00 – ${day} 20:00 UTC.`);
    const roster = page.getByRole('region', { name: 'On-call roster of MR-1' });
    const row = roster.getByRole('row', { name: /Mateo Brandt/ });
    await expect(row).toContainText(`${day} 08:00`);
    await expect(row).toContainText('upcoming');
    await expect(row).toContainText('Tomas Reyes-Lind');
    await page.screenshot({ path: 'test-results/screens/roster.png', fullPage: true });

    await row.getByRole('button', { name: /^Remove Mateo Brandt/ }).click();
    await roster.getByRole('group', { name: /Confirm removing Mateo Brandt/ }).getByRole('button', { name: 'Yes, remove' }).click();
    await expect(roster.getByRole('row', { name: /Mateo Brandt/ })).toHaveCount(0);
  });
});

test.describe('as the analyst', () => {
  signedInAs('analyst');

  test('sees the roster but no form to change it', async ({ page }) => {
    await page.goto('/roster/MR-1');
    await expect(page.getByRole('region', { name: 'On-call roster of MR-1' })).toBeVisible();
    await expect(page.getByRole('form', { name: /Add a shift/ })).toHaveCount(0);
    await expect(page.getByRole('navigation', { name: 'Administration' })).toHaveCount(0);
    await expect(page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Trips' })).toBeVisible();
  });
});
