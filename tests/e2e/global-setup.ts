import { chromium, type FullConfig } from '@playwright/test';
import fs from 'node:fs';
import { DEMO_PASSWORD, ROLE_ACCOUNTS, storageStatePath } from './accounts';

/** Sign in once per role and keep the storage state for the tests. */
export default async function globalSetup(config: FullConfig): Promise<void> {
  const baseURL = config.projects[0]!.use.baseURL!;
  const launchOptions = config.projects[0]!.use.launchOptions;
  fs.mkdirSync('test-results/e2e/.auth', { recursive: true });
  const browser = await chromium.launch(launchOptions);
  for (const [role, email] of Object.entries(ROLE_ACCOUNTS)) {
    const context = await browser.newContext({ baseURL });
    const res = await context.request.post('/api/auth/sign-in', { data: { email, password: DEMO_PASSWORD } });
    if (!res.ok()) throw new Error(`sign-in as ${role} failed: ${res.status()} ${await res.text()}`);
    await context.storageState({ path: storageStatePath(role) });
    await context.close();
  }
  await browser.close();
}
