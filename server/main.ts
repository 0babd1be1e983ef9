/** `npm start`: database, demo lab, API and built client in one process. */
import { performance } from 'node:perf_hooks';
import { join } from 'node:path';
import type { Server } from 'node:http';
import { createApp } from './app';
import { openDatabase, sessionSecret } from './boot';
import { loadConfig } from './config';
import { DEMO_LABS, DEMO_PASSWORD } from './demo/people';
import { databaseIsEmpty, seedDemo } from './demo/seed';
import { createLogger } from './log';
import { mailerFor, outboxAvailable } from './mail/mailer';
import { startReminderJob, type ReminderJob } from '../jobs/reminders';

const t0 = performance.now();
const config = loadConfig();
const log = createLogger();

const database = await openDatabase(config, log);
const { db, pool } = database;

if (config.LOAD_DEMO === 'auto' && (await databaseIsEmpty(db))) {
  await seedDemo(db, { content: 'full', uploadsDir: join(config.DATA_DIR, 'uploads') });
  log.info('Loaded the demo labs (invented data).');
}

// E-mail: the SMTP service from the settings, or a local fake one that keeps messages in MariaDB.
const mailer = mailerFor({ db, config, log });
const fakeSmtp = await mailer.start();

const { app, close: closeApp } = createApp({ db, pool, config, log, sessionSecret: sessionSecret(config) });

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
console.log(`\nKeepwell is running at http://${config.HOST}:${port}/  (ready in ${Math.round(performance.now() - t0)} ms)`);
if (config.LOAD_DEMO === 'auto') {
  console.log(`Demo sign-ins (password for all: ${DEMO_PASSWORD}):`);
  for (const lab of DEMO_LABS) for (const p of lab.people) console.log(`  ${p.email.padEnd(30)} ${p.role.padEnd(11)} ${lab.name}`);
}
if (fakeSmtp) {
  console.log(`E-mail: no SMTP settings, so messages go to a local fake SMTP service (${fakeSmtp.host}:${fakeSmtp.port}) and are not delivered.`);
  if (outboxAvailable(config)) console.log(`  Read them on the Outbox page (owners): http://${config.HOST}:${port}/lab/outbox`);
  else log.warn('NODE_ENV=production without SMTP settings: e-mail (invitations, password resets, reminders) is not delivered. Set SMTP_HOST.');
} else if (config.smtp) {
  console.log(`E-mail: through ${config.smtp.host}:${config.smtp.port} as ${config.MAIL_FROM}`);
}

// The morning reminder job, in this process unless it runs alone (`npm run jobs`).
let reminderJob: ReminderJob | null = null;
if (config.JOBS_IN_APP === 'true') reminderJob = startReminderJob({ db, mailer, log, config });
console.log('Press Ctrl-C to stop.\n');

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
