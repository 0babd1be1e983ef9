/** Vitest global setup for browser tests: Debian's chromium, installed when missing (as root). */
import { execFileSync } from 'node:child_process';
import { existsSync } from 'node:fs';

export const CHROMIUM = process.env.CHROMIUM_PATH ?? '/usr/bin/chromium';

export default function setup() {
  if (existsSync(CHROMIUM)) return;
  if (process.getuid?.() !== 0) {
    throw new Error(`Chromium is missing at ${CHROMIUM}. Install it with: sudo apt-get install -y chromium`);
  }
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  execFileSync('apt-get', ['update', '-qq'], { env, stdio: 'inherit' });
  execFileSync('apt-get', ['install', '-y', '-qq', 'chromium'], { env, stdio: 'inherit' });
}
