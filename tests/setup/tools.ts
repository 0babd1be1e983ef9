/** Vitest global setup for API tests: poppler-utils (pdfinfo, pdftotext, pdftoppm) to check generated PDFs. */
import { execFileSync } from 'node:child_process';
import { existsSync } from 'node:fs';

export default function setup() {
  if (existsSync('/usr/bin/pdftoppm')) return;
  if (process.getuid?.() !== 0) throw new Error('poppler-utils is missing. Install it with: sudo apt-get install -y poppler-utils');
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  execFileSync('apt-get', ['update', '-qq'], { env, stdio: 'inherit' });
  execFileSync('apt-get', ['install', '-y', '-qq', 'poppler-utils'], { env, stdio: 'inherit' });
}
