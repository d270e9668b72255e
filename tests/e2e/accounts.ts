export const DEMO_PASSWORD = process.env.DEMO_PASSWORD ?? 'millrace-demo';

export const ROLE_ACCOUNTS = {
  operator: 'operator@millrace.test',
  analyst: 'analyst@millrace.test',
  engineer: 'engineer@millrace.test',
  engineer2: 'engineer2@millrace.test',
  admin: 'admin@millrace.test',
} as const;

export type DemoRole = keyof typeof ROLE_ACCOUNTS;

export const storageStatePath = (role: string) => `test-results/e2e/.auth/${role}.json`;
