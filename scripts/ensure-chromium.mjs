// Browser tests drive Debian's chromium (never a downloaded browser). Install it when missing.
import { existsSync } from 'node:fs';
import { execSync } from 'node:child_process';

const CHROMIUM = '/usr/bin/chromium';
if (existsSync(CHROMIUM)) process.exit(0);
const isRoot = typeof process.getuid === 'function' && process.getuid() === 0;
if (!isRoot) {
  console.error(`browser tests need ${CHROMIUM}: install it with "sudo apt-get install -y chromium"`);
  process.exit(process.env.CI ? 1 : 0);
}
console.error("installing Debian's chromium for the browser tests (apt-get) ...");
try {
  execSync('apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium', { stdio: ['ignore', 'ignore', 'inherit'] });
} catch {
  console.error('could not install chromium with apt-get');
  process.exit(process.env.CI ? 1 : 0);
}
