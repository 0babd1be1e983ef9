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
  /**
   * Outgoing e-mail. Without SMTP_HOST the app starts a local fake SMTP service
   * that keeps every message in MariaDB (the development Outbox page shows them).
   */
  SMTP_HOST: z.string().min(1).optional(),
  SMTP_PORT: z.coerce.number().int().min(1).max(65535).optional(),
  SMTP_USER: z.string().min(1).optional(),
  SMTP_PASSWORD: z.string().optional(),
  /** 'true' for implicit TLS (usually port 465); otherwise STARTTLS is used when the server offers it. */
  SMTP_SECURE: z.enum(['true', 'false']).default('false'),
  /** The sender, e.g. `Keepwell <keepwell@yourlab.com>`. */
  MAIL_FROM: z.string().min(3).max(200).default('Keepwell <keepwell@localhost>'),
  /**
   * Photos and chamber-log files in an S3-compatible bucket instead of DATA_DIR/uploads (several instances
   * need one shared store). Credentials: the AWS SDK's usual sources (AWS_ACCESS_KEY_ID, AWS_SECRET_ACCESS_KEY, ...).
   */
  S3_BUCKET: z.string().min(3).max(63).optional(),
  /** The store's address for a non-AWS store, e.g. http://127.0.0.1:9000. */
  S3_ENDPOINT: z.string().url().optional(),
  S3_REGION: z.string().min(1).optional(),
  /** 'true' for stores that want the bucket in the path (most local and self-hosted ones). */
  S3_FORCE_PATH_STYLE: z.enum(['true', 'false']).default('false'),
  /**
   * More than one database server (a Galera cluster without a proxy in front): host:port list, tried in
   * order; replaces the host of DATABASE_URL. When one stops answering, new connections go to the next.
   */
  DATABASE_HOSTS: z
    .string()
    .regex(/^[A-Za-z0-9.:[\]-]+:\d{1,5}(,[A-Za-z0-9.:[\]-]+:\d{1,5})*$/, 'host:port,host:port,...')
    .optional(),
  /** Run the reminder job inside the app process ('false' when `npm run jobs` runs it elsewhere). */
  JOBS_IN_APP: z.enum(['true', 'false']).default('true'),
  /** Worker processes `npm start` serves from (server/start.ts); default one per core; 1 serves from a single process. */
  WORKERS: z.coerce.number().int().min(1).max(64).optional(),
});

/** Where mail goes: a real SMTP service, or null for the local fake one. */
export interface SmtpSettings {
  host: string;
  port: number;
  secure: boolean;
  user?: string;
  password?: string;
}

export type Config = z.infer<typeof schema> & { secureCookies: boolean; smtp: SmtpSettings | null };

export function loadConfig(env: NodeJS.ProcessEnv = process.env): Config {
  const parsed = schema.safeParse(env);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join('.')}: ${i.message}`);
    throw new Error(`Invalid settings in the environment:\n${lines.join('\n')}`);
  }
  const c = parsed.data;
  const secure = c.SMTP_SECURE === 'true';
  const smtp: SmtpSettings | null = c.SMTP_HOST
    ? { host: c.SMTP_HOST, port: c.SMTP_PORT ?? (secure ? 465 : 587), secure, user: c.SMTP_USER, password: c.SMTP_PASSWORD }
    : null;
  if ((c.S3_ENDPOINT || c.S3_REGION) && !c.S3_BUCKET) {
    throw new Error('Invalid settings in the environment:\n  S3_BUCKET: required when S3_ENDPOINT or S3_REGION is set');
  }
  if (c.DATABASE_HOSTS && !c.DATABASE_URL) {
    throw new Error('Invalid settings in the environment:\n  DATABASE_URL: required when DATABASE_HOSTS is set (it gives the account and database)');
  }
  if (!smtp && (c.SMTP_PORT || c.SMTP_USER || c.SMTP_PASSWORD)) {
    throw new Error('Invalid settings in the environment:\n  SMTP_HOST: required when SMTP_PORT, SMTP_USER or SMTP_PASSWORD is set');
  }
  return { ...c, secureCookies: c.PUBLIC_URL?.startsWith('https://') ?? false, smtp };
}
