/** `npm start`: database, demo lab, API and built client in one process. */
import { performance } from 'node:perf_hooks';
import type { Server } from 'node:http';
import { createApp } from './app';
import { openDatabase, sessionSecret } from './boot';
import { loadConfig } from './config';
import { DEMO_LABS, DEMO_PASSWORD } from './demo/people';
import { databaseIsEmpty, seedDemo } from './demo/seed';
import { createLogger } from './log';

const t0 = performance.now();
const config = loadConfig();
const log = createLogger();

const database = await openDatabase(config, log);
const { db, pool } = database;

if (config.LOAD_DEMO === 'auto' && (await databaseIsEmpty(db))) {
  await seedDemo(db);
  log.info('Loaded the demo labs (invented data).');
}

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
  await closeApp();
  await database.close();
  log.info('stopped');
  process.exit(0);
}
process.on('SIGINT', () => void shutdown('SIGINT'));
process.on('SIGTERM', () => void shutdown('SIGTERM'));
