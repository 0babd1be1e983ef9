/**
 * `npm run jobs`: the reminder job alone, for a deployment that runs it apart
 * from the web processes (set JOBS_IN_APP=false on those). It may run on
 * several machines at once: each reminder is claimed in MariaDB first.
 */
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { openDatabase } from '../server/boot';
import { loadConfig } from '../server/config';
import { createLogger } from '../server/log';
import { mailerFor } from '../server/mail/mailer';
import { REMINDER_CRON, startReminderJob, tick } from './reminders';

const config = loadConfig();
const log = createLogger();

function privateDatabaseRunning(): boolean {
  const pidFile = join(config.DATA_DIR, 'mariadb', 'mariadb.pid');
  if (!existsSync(pidFile)) return false;
  const pid = Number(readFileSync(pidFile, 'utf8').trim());
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}

if (!config.DATABASE_URL && privateDatabaseRunning()) {
  console.error(
    `The private database in ${config.DATA_DIR} is in use (by the app, which runs the reminder job itself, or by another job runner).\n` +
      'Run the job alone only against a shared database: set DATABASE_URL here, and JOBS_IN_APP=false for the app.',
  );
  process.exit(1);
}

// With DATABASE_URL this only checks the schema version: the job never needs DDL rights.
const database = await openDatabase(config, log, { migrate: false }).catch((err: Error) => {
  console.error(err.message);
  process.exit(1);
});
const { db } = database;
const mailer = mailerFor({ db, config, log });
const fake = await mailer.start();

// `npm run jobs -- --once`: one run now, its counts as JSON, then exit (for an outside scheduler, and test:cluster).
if (process.argv.includes('--once')) {
  const report = await tick({ db, mailer, log, config, now: new Date() });
  console.log(JSON.stringify(report));
  await mailer.close();
  await database.close();
  process.exit(0);
}

const job = startReminderJob({ db, mailer, log, config });

console.log(`Keepwell reminder job running (${REMINDER_CRON}).`);
if (fake) console.log(`No SMTP settings: e-mail goes to the local fake SMTP service on ${fake.host}:${fake.port} (see the Outbox page).`);
console.log('Press Ctrl-C to stop.');

let stopping = false;
async function shutdown(signal: string) {
  if (stopping) return;
  stopping = true;
  log.info(`${signal}: letting the current run finish, then stopping`);
  await job.stop();
  await mailer.close();
  await database.close();
  process.exit(0);
}
process.on('SIGINT', () => void shutdown('SIGINT'));
process.on('SIGTERM', () => void shutdown('SIGTERM'));
