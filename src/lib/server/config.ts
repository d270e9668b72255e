import { z } from 'zod';

const flag = z
  .enum(['1', '0', 'true', 'false', 'yes', 'no', ''])
  .transform((v) => v === '1' || v === 'true' || v === 'yes');

/** Every environment variable Millrace reads, parsed once. */
export const configSchema = z.object({
  DATABASE_URL: z
    .string()
    .regex(/^postgres(ql)?:\/\/.+/, 'DATABASE_URL must be a postgres:// URL')
    .default('postgres://millrace@127.0.0.1:54329/millrace'),
  PUBLIC_URL: z.string().url('PUBLIC_URL must be a URL such as http://127.0.0.1:4321').default('http://127.0.0.1:4321'),
  COOKIE_SECURE: flag.optional(),
  DEMO_MODE: flag.default('0'),
  UPLOAD_DIR: z.string().min(1).default('.data/uploads'),
  SMTP_HOST: z.string().min(1).default('127.0.0.1'),
  SMTP_PORT: z.coerce.number().int().min(1).max(65535).default(2525),
  SMTP_USER: z.string().optional(),
  SMTP_PASS: z.string().optional(),
  MAIL_FROM: z.string().min(3).default('Millrace <millrace@localhost>'),
  DIGEST_MINUTES: z.coerce.number().int().min(1).max(1440).default(15),
  MAILBOX_DIR: z.string().min(1).default('.data/mailbox'),
  SESSION_DAYS: z.coerce.number().min(0.001).max(90).default(7),
});

export type Config = z.infer<typeof configSchema> & { cookieSecure: boolean };

/** Parse a configuration from an environment; throws with every bad variable named. */
export function parseConfig(env: Record<string, string | undefined>): Config {
  const result = configSchema.safeParse(env);
  if (!result.success) {
    const lines = result.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`);
    throw new Error(`Bad configuration:\n  ${lines.join('\n  ')}`);
  }
  const c = result.data;
  // Secure cookies follow the public URL unless set explicitly (plain HTTP on loopback in the demo).
  return { ...c, cookieSecure: c.COOKIE_SECURE ?? c.PUBLIC_URL.startsWith('https://') };
}

let cached: Config | undefined;
/** The running process's configuration. */
export function config(): Config {
  cached ??= parseConfig(process.env);
  return cached;
}
