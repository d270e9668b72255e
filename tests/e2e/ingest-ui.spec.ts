import fs from 'node:fs';
import { expect, test, type Page } from '@playwright/test';
import { DEMO_PASSWORD, ROLE_ACCOUNTS, type DemoRole } from './accounts';
import { concatBytes, loopRecord } from '../integration/packets';
import { encodePacket, LOOP_PACKET_LENGTH } from '../../src/lib/telemetry';

const SCREENS = 'test-results/screens';
const shot = (page: Page, name: string) => page.screenshot({ path: `${SCREENS}/${name}.png`, fullPage: true });
/** A session of its own per test, so that another spec signing out a shared stored session cannot end it. */
function signedInAs(role: DemoRole) {
  test.beforeEach(async ({ page }) => {
    const res = await page.request.post('/api/auth/sign-in', { data: { email: ROLE_ACCOUNTS[role], password: DEMO_PASSWORD } });
    expect(res.ok()).toBe(true);
  });
}
const hex = (b: Uint8Array) => Array.from(b, (x) => x.toString(16).padStart(2, '0')).join(' ');

/**
 * A recorded pass of loop housekeeping (10 Hz) for MR-1, played back long after it was recorded:
 * sequence counts 150–159 are missing, and a last packet has one octet flipped, so its CRC fails.
 */
function passFile(packets: number, startMs: number) {
  const parts: Uint8Array[] = [];
  for (let seq = 0; seq < packets; seq++) {
    if (seq >= 150 && seq <= 159) continue;
    parts.push(encodePacket(loopRecord(seq, startMs + seq * 100, 0, 4 + (seq % 7))));
  }
  const corrupt = encodePacket(loopRecord(packets, startMs + packets * 100));
  corrupt[30] = corrupt[30]! ^ 0x55;
  const badOffset = parts.length * LOOP_PACKET_LENGTH;
  parts.push(corrupt);
  return { bytes: concatBytes(parts), stored: parts.length - 1, badOffset, corrupt };
}

test.describe('as the operator', () => {
  signedInAs('operator');

  test('uploads a recorded pass with a real progress bar, reads the report, re-ingests it, and sees it on the link page', async ({ page }) => {
    // 3000 packets at 10 Hz, recorded three weeks ago.
    const pass = passFile(3000, Date.now() - 21 * 86_400_000);
    await page.goto('/');
    await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Uploads' }).click();
    await expect(page.getByRole('heading', { name: 'Uploads', level: 1 })).toBeVisible();

    await page.getByLabel('Spacecraft', { exact: true }).selectOption('MR-1');
    await page.getByLabel('Ground station', { exact: true }).selectOption('karoo-ridge');
    await page.getByLabel('Pass file', { exact: true }).setInputFiles({ name: 'pass-e2e.bin', mimeType: 'application/octet-stream', buffer: Buffer.from(pass.bytes) });

    // Slow the upload down so that the bar moves through intermediate values on its way to 100 %.
    const cdp = await page.context().newCDPSession(page);
    await cdp.send('Network.enable');
    await cdp.send('Network.emulateNetworkConditions', { offline: false, latency: 20, downloadThroughput: -1, uploadThroughput: 48 * 1024 });
    await page.evaluate(() => {
      const seen: number[] = [];
      (window as unknown as { seenProgress: number[] }).seenProgress = seen;
      new MutationObserver(() => {
        const bar = document.querySelector('[role="progressbar"]');
        const v = Number(bar?.getAttribute('aria-valuenow'));
        if (bar && seen[seen.length - 1] !== v) seen.push(v);
      }).observe(document.body, { subtree: true, childList: true, attributes: true, attributeFilter: ['aria-valuenow'] });
    });
    await page.getByRole('button', { name: 'Upload', exact: true }).click();
    const bar = page.getByRole('progressbar', { name: 'Upload progress' });
    await expect(bar).toBeVisible();
    await expect(page.getByText(/Sending \d+ %/)).toBeVisible();
    await shot(page, 'uploads-sending');
    await expect(bar).toHaveAttribute('aria-valuenow', '100', { timeout: 30_000 });
    const report = page.getByRole('region', { name: /^Report of pass-e2e\.bin/ });
    await expect(report).toBeVisible({ timeout: 30_000 });
    await cdp.send('Network.emulateNetworkConditions', { offline: false, latency: 0, downloadThroughput: -1, uploadThroughput: -1 });
    await expect(page.getByText('Sent 100 % · ingested')).toBeVisible();

    const seen = await page.evaluate(() => (window as unknown as { seenProgress: number[] }).seenProgress);
    expect(seen[seen.length - 1]).toBe(100);
    expect(seen.some((v) => v > 0 && v < 100), `progress values ${seen.join(', ')}`).toBe(true);
    for (let i = 1; i < seen.length; i++) expect(seen[i]!).toBeGreaterThanOrEqual(seen[i - 1]!);

    await expect(report.getByRole('definition').first()).toHaveText('2,990');
    const rejected = report.getByRole('table', { name: 'Rejected packets' });
    await expect(rejected.getByRole('row')).toHaveCount(2);
    await expect(rejected.getByRole('row').nth(1)).toContainText(`${pass.badOffset.toLocaleString('en-US')} B`);
    await expect(rejected.getByRole('row').nth(1)).toContainText('crc mismatch');
    const gaps = report.getByRole('table', { name: 'Sequence gaps' });
    await expect(gaps.getByRole('row')).toHaveCount(2);
    await expect(gaps.getByRole('row').nth(1).getByRole('cell')).toHaveText(['32 loop', '150', '159', '10 pkt']);
    await shot(page, 'uploads-report');

    // The history has the upload; a re-ingest stores nothing twice.
    const uploadId = /upload #(\d+)/.exec((await report.getByRole('heading').first().textContent()) ?? '')?.[1];
    expect(uploadId).toBeTruthy();
    await page.getByRole('button', { name: `Re-ingest upload ${uploadId}` }).click();
    const again = page.getByRole('region', { name: `Re-ingest of upload #${uploadId}` });
    await expect(again).toBeVisible({ timeout: 30_000 });
    await expect(again.getByRole('definition').nth(0)).toHaveText('0');
    await expect(again.getByRole('definition').nth(1)).toHaveText('2,990');
    await expect(again.getByText('Every readable packet was already stored')).toBeVisible();
    await shot(page, 'uploads-reingest');

    // The link page of MR-1, reached from the Fleet card header.
    await page.goto('/');
    await page.getByRole('article', { name: 'Spacecraft MR-1' }).getByRole('link', { name: 'MR-1', exact: true }).click();
    await expect(page).toHaveURL(/\/spacecraft\/MR-1$/);
    const batches = page.getByRole('region', { name: 'Recent ingest batches' });
    const uploadRows = batches.getByRole('row').filter({ hasText: `upload #${uploadId}` });
    await expect(uploadRows).toHaveCount(2);
    await expect(uploadRows.first()).toContainText('Karoo Ridge');
    await expect(uploadRows.first()).toContainText('playback');
    const gapRow = page.getByRole('region', { name: 'Open sequence gaps' }).getByRole('row').filter({ hasText: '150–159' });
    await expect(gapRow).toHaveCount(1);
    await expect(gapRow).toContainText('10 pkt');
    const quarantined = page.getByRole('region', { name: 'Recent quarantined packets' }).getByRole('row').filter({ hasText: 'crc mismatch' });
    await expect(quarantined.first()).toContainText(hex(pass.corrupt.subarray(0, 16)));
    await expect(quarantined.first()).toContainText(`${pass.badOffset.toLocaleString('en-US')} B`);
    await shot(page, 'link-mr1');
  });
});

test.describe('as the analyst', () => {
  signedInAs('analyst');
  test('sees the upload history but no upload controls', async ({ page }) => {
    await page.goto('/uploads');
    await expect(page.getByRole('heading', { name: 'Upload history' })).toBeVisible();
    await expect(page.getByRole('button', { name: 'Upload', exact: true })).toHaveCount(0);
    await expect(page.getByRole('button', { name: /^Re-ingest/ })).toHaveCount(0);
    await expect(page.getByText('your roles show the history only')).toBeVisible();
    const res = await page.goto('/spacecraft/NOPE-9');
    expect(res?.status()).toBe(404);
    await expect(page.getByRole('heading', { name: 'No spacecraft with the key NOPE-9' })).toBeVisible();
    expect((await page.goto('/spacecraft/NOPE-9/sheets'))?.status()).toBe(404);
    await page.goto('/spacecraft/MR-3');
    await expect(page.getByRole('region', { name: 'Recent ingest batches' })).toBeVisible();
    await shot(page, 'link-mr3-analyst');
  });
});

test.describe('as the engineer', () => {
  signedInAs('engineer');

  test('uploads a sheet with errors and sees each under its JSON path, then valid ones, with the torque-constant warning', async ({ page }) => {
    const base = JSON.parse(fs.readFileSync('ingest/fleet/MR-2.json', 'utf8'));
    await page.goto('/');
    await page.getByRole('link', { name: 'Sheets of MR-2' }).click();
    await expect(page).toHaveURL(/\/spacecraft\/MR-2\/sheets$/);
    await expect(page.getByRole('heading', { name: /^Sheets/, level: 1 })).toBeVisible();
    await expect(page.getByRole('table', { name: 'Inertia matrix' })).toContainText('0.3110');

    // Not JSON at all: refused in the browser, before any request.
    const text = page.getByLabel('Sheet JSON', { exact: true });
    await text.fill('{ "sheetVersion": 1, ');
    await page.getByRole('button', { name: 'Upload sheet' }).click();
    await expect(page.getByText(/^This is not JSON/)).toBeVisible();

    // JSON with errors, from a chosen file: every server message sits under its path.
    const bad = structuredClone(base);
    bad.effectiveFrom = '2026-11-15T00:00:00Z';
    bad.loops[0].axis = [1, 1, 0];
    bad.loops[0].channel.alongField_m = -0.004;
    bad.loops[0].shape.cornerRadius_m = 0;
    bad.loops[0].fluids = bad.loops[0].fluid; // misspelt: named, not quietly replaced by the defaults
    delete bad.loops[0].fluid;
    await page.getByLabel('Choose a .json file', { exact: true }).setInputFiles({ name: 'MR-2-bad.json', mimeType: 'application/json', buffer: Buffer.from(JSON.stringify(bad, null, 2)) });
    await expect(text).toHaveValue(/"alongField_m": -0.004/);
    await page.getByRole('button', { name: 'Upload sheet' }).click();
    const problems = page.getByRole('list', { name: 'Problems by JSON path' });
    await expect(problems.getByRole('listitem', { name: 'loops[0].axis' })).toContainText('axis must be a unit vector');
    await expect(problems.getByRole('listitem', { name: 'loops[0].channel.alongField_m' })).toContainText('alongField_m must be greater than 0');
    await expect(problems.getByRole('listitem', { name: 'loops[0].shape.cornerRadius_m' })).toContainText('cornerRadius_m must be greater than 0');
    await expect(problems.getByRole('listitem', { name: 'loops[0].fluids' })).toContainText('"fluids" is not a field of the sheet here');
    await shot(page, 'sheets-errors');

    // A valid copy with a later effective time.
    const good = structuredClone(base);
    good.effectiveFrom = '2026-11-15T00:00:00Z';
    await text.fill(JSON.stringify(good, null, 2));
    await page.getByRole('button', { name: 'Upload sheet' }).click();
    await expect(page.getByRole('status').filter({ hasText: 'Sheet stored' })).toContainText('effective from 2026-11-15 00:00:00 UTC');
    await expect(page.getByRole('heading', { name: 'The ideal torque constant changes' })).toHaveCount(0);
    const history = page.getByRole('region', { name: 'Sheet history' });
    await expect(history.getByRole('row')).toHaveCount(3);
    await expect(history.getByRole('row').nth(1)).toContainText('2026-11-15 00:00');
    await expect(history.getByRole('row').nth(1)).toContainText('in force');
    await expect(history.getByRole('row').nth(1)).toContainText('Mateo Brandt');

    // The same date again is refused, under effectiveFrom.
    await page.getByRole('button', { name: 'Upload sheet' }).click();
    await expect(problems.getByRole('listitem', { name: 'effectiveFrom' })).toContainText('choose a different time');

    // A planned sheet with weaker pump magnets: the ideal torque constant falls by a third.
    const weaker = structuredClone(base);
    weaker.effectiveFrom = '2099-01-01T00:00:00Z';
    for (const st of weaker.loops[0].pumpStations) st.field_T = 0.3;
    await text.fill(JSON.stringify(weaker, null, 2));
    await page.getByRole('button', { name: 'Upload sheet' }).click();
    const warning = page.getByRole('alert').filter({ hasText: 'The ideal torque constant changes' });
    await expect(warning).toContainText('changes every effectiveness figure after 2099-01-01 00:00:00 UTC');
    await expect(warning.getByRole('row').nth(1).getByRole('cell').nth(3)).toHaveText('−33.3 %');
    await expect(history.getByRole('row').nth(1)).toContainText('planned');
    await expect(page.getByRole('region', { name: 'Sheet effective from 2099-01-01 00:00:00' })).toContainText('0.300 T');
    await shot(page, 'sheets-stored');
  });
});

test.describe('as the admin', () => {
  test.use({ permissions: ['clipboard-read', 'clipboard-write'] });
  signedInAs('admin');

  test('creates an ingest token, sees it once, uses it, and revokes it', async ({ page }) => {
    await page.goto('/');
    await page.getByRole('navigation', { name: 'Administration' }).getByRole('link', { name: 'Tokens' }).click();
    await expect(page.getByRole('heading', { name: 'Ingest tokens', level: 1 })).toBeVisible();
    const panel = page.getByRole('region', { name: 'Ingest tokens of MR-1' });

    await panel.getByRole('button', { name: 'Create token' }).click();
    await expect(panel.getByText('Give the token a label')).toBeVisible();

    await panel.getByLabel('Label of a new token', { exact: true }).fill('e2e north-fell script');
    await panel.getByRole('button', { name: 'Create token' }).click();
    const shown = panel.getByRole('status', { name: 'New token e2e north-fell script' });
    await expect(shown).toContainText('it will not be shown again');
    const token = await shown.getByLabel('New ingest token').inputValue();
    expect(token).toMatch(/^mrt_[A-Za-z0-9_-]{32}$/);
    await shown.getByRole('button', { name: 'Copy' }).click();
    await expect(shown.getByRole('button', { name: 'Copied' })).toBeVisible();
    expect(await page.evaluate(() => navigator.clipboard.readText())).toBe(token);
    const row = panel.getByRole('row').filter({ hasText: 'e2e north-fell script' });
    await expect(row).toContainText(`····${token.slice(-4)}`);
    await expect(row).toContainText('never');
    await shot(page, 'tokens-created');

    // The token works for ingest until revoked. The sample is ten minutes old, so that it is never
    // the newest of MR-1 when the pass-watch spec posts its own live samples afterwards.
    const packet = encodePacket(loopRecord(42, Date.now() - 600_000));
    const ok = await page.request.post('/api/ingest?station=north-fell', {
      headers: { authorization: `Bearer ${token}`, 'content-type': 'application/octet-stream' },
      data: Buffer.from(packet),
    });
    expect(ok.status()).toBe(200);

    await shown.getByRole('button', { name: 'I have stored it' }).click();
    await expect(shown).toHaveCount(0);
    await page.reload();
    expect(await page.content()).not.toContain(token);
    await expect(row).not.toContainText('never');

    await row.getByRole('button', { name: 'Revoke e2e north-fell script' }).click();
    const confirm = panel.getByRole('group', { name: 'Confirm revoking e2e north-fell script' });
    await expect(confirm).toContainText('cannot be undone');
    await shot(page, 'tokens-confirm');
    await confirm.getByRole('button', { name: 'Yes, revoke' }).click();
    await expect(confirm).toHaveCount(0);
    await expect(row.getByRole('button', { name: /^Revoke/ })).toHaveCount(0);
    await expect(row.getByRole('cell').nth(4)).toHaveText(/^\d{4}-\d{2}-\d{2} \d{2}:\d{2}:\d{2}$/);
    await shot(page, 'tokens-revoked');

    const refused = await page.request.post('/api/ingest', {
      headers: { authorization: `Bearer ${token}`, 'content-type': 'application/octet-stream' },
      data: Buffer.from(packet),
    });
    expect(refused.status()).toBe(401);
  });
});
