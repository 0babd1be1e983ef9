/**
 * One app process: database, demo lab, API and built client (`npm run dev:server`, and `npm start` with
 * WORKERS=1). With KW_ROLE=worker it is one of the workers server/start.ts forks: it connects to
 * DATABASE_URL without migrating and serves requests; the primary launched MariaDB and loaded the demo.
 */
import cluster from 'node:cluster';
import { performance } from 'node:perf_hooks';
import type { Server } from 'node:http';
import { createApp } from './app';
import { openDatabase, openFilesAndDemo, sessionSecret } from './boot';
import { loadConfig } from './config';
import { DEMO_LABS, DEMO_PASSWORD } from './demo/people';
import { createLogger } from './log';
import { mailerFor, outboxAvailable } from './mail/mailer';
import { startReminderJob, type ReminderJob } from '../jobs/reminders';

const t0 = performance.now();
const config = loadConfig();
const log = createLogger();
const worker = process.env.KW_ROLE === 'worker';
if (worker && !config.DATABASE_URL) throw new Error('A worker process needs DATABASE_URL (server/start.ts sets it)');

const database = await openDatabase(config, log, { migrate: !worker });
const { db, pool } = database;
// Photos and chamber-log files (a folder or an S3 bucket), and the demo labs into an empty database.
const files = await openFilesAndDemo(config, log, database);

// E-mail: the SMTP service from the settings, or a local fake one that keeps messages in MariaDB.
const mailer = mailerFor({ db, config, log });
const fakeSmtp = await mailer.start();

const { app, close: closeApp } = createApp({ db, pool, config, log, sessionSecret: sessionSecret(config), files });

const server: Server = app.listen(config.PORT, config.HOST);
await new Promise<void>((resolve, reject) => {
  server.once('listening', resolve);
  server.once('error', reject);
}).catch(async (err: NodeJS.ErrnoException) => {
  log.error(err.code === 'EADDRINUSE' ? `Port ${config.PORT} is in use: set PORT to another port` : 'Could not listen', err);
  await database.close();
  process.exit(1);
});

const addr = server.address();
const port = typeof addr === 'object' && addr ? addr.port : config.PORT;
// A worker says one line; the primary (server/start.ts) prints the rest once.
const say = worker ? () => {} : console.log;
if (worker) console.log(`Worker ${process.pid} serving http://${config.HOST}:${port}/`);
say(`\nKeepwell is running at http://${config.HOST}:${port}/  (ready in ${Math.round(performance.now() - t0)} ms)`);
if (config.LOAD_DEMO === 'auto') {
  say(`Demo sign-ins (password for all: ${DEMO_PASSWORD}):`);
  for (const lab of DEMO_LABS) for (const p of lab.people) say(`  ${p.email.padEnd(30)} ${p.role.padEnd(11)} ${lab.name}`);
}
if (fakeSmtp) {
  say(`E-mail: no SMTP settings, so messages go to a local fake SMTP service (${fakeSmtp.host}:${fakeSmtp.port}) and are not delivered.`);
  if (outboxAvailable(config)) say(`  Read them on the Outbox page (owners): http://${config.HOST}:${port}/lab/outbox`);
  else if (!worker) log.warn('NODE_ENV=production without SMTP settings: e-mail (invitations, password resets, reminders) is not delivered. Set SMTP_HOST.');
} else if (config.smtp) {
  say(`E-mail: through ${config.smtp.host}:${config.smtp.port} as ${config.MAIL_FROM}`);
}

// The morning reminder job, in this process unless it runs alone (`npm run jobs`).
let reminderJob: ReminderJob | null = null;
if (config.JOBS_IN_APP === 'true') reminderJob = startReminderJob({ db, mailer, log, config });
say('Press Ctrl-C to stop.\n');

let stopping = false;
async function shutdown(signal: string) {
  if (stopping) return;
  stopping = true;
  log.info(`${signal}: finishing requests in flight, then stopping`);
  const force = setTimeout(() => server.closeAllConnections(), 10_000);
  await new Promise<void>((resolve) => {
    server.close(() => resolve());
    server.closeIdleConnections();
  });
  clearTimeout(force);
  await reminderJob?.stop();
  await mailer.close();
  await closeApp();
  await database.close();
  log.info('stopped');
  process.exit(0);
}
process.on('SIGINT', () => void shutdown('SIGINT'));
process.on('SIGTERM', () => void shutdown('SIGTERM'));
// A worker whose primary has gone stops too.
if (cluster.isWorker) process.on('disconnect', () => void shutdown('primary gone'));
