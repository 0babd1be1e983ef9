import { z } from 'zod';

const schema = z.object({
  NODE_ENV: z.enum(['development', 'production', 'test']).default('development'),
  PORT: z.coerce.number().int().min(0).max(65535).default(3000),
  HOST: z.string().default('127.0.0.1'),
  DATABASE_URL: z.string().url().optional(),
  /** Optional privileged URL for migrations when DATABASE_URL's account is restricted. */
  MIGRATION_DATABASE_URL: z.string().url().optional(),
  DATA_DIR: z.string().default('.data'),
  SESSION_SECRET: z.string().min(16).optional(),
  SESSION_IDLE_MINUTES: z.coerce.number().int().min(5).max(24 * 60).default(120),
  /** Set when the app is reached over HTTPS (directly or behind a proxy). */
  PUBLIC_URL: z.string().url().optional(),
  TRUST_PROXY: z.coerce.number().int().min(0).max(10).default(0),
  LOAD_DEMO: z.enum(['auto', 'never']).default('auto'),
});

export type Config = z.infer<typeof schema> & { secureCookies: boolean };

export function loadConfig(env: NodeJS.ProcessEnv = process.env): Config {
  const parsed = schema.safeParse(env);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join('.')}: ${i.message}`);
    throw new Error(`Invalid settings in the environment:\n${lines.join('\n')}`);
  }
  const c = parsed.data;
  return { ...c, secureCookies: c.PUBLIC_URL?.startsWith('https://') ?? false };
}
