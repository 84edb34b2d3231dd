import { existsSync } from 'node:fs';

/** Debian's chromium, which the browser tests drive through playwright-core. */
export const CHROMIUM = process.env.DENDROLOG_CHROMIUM ?? '/usr/bin/chromium';

/** Whether the browser tests can run; when CI requires them, a missing browser is a failure, not a skip. */
export function browserAvailable(): boolean {
  if (existsSync(CHROMIUM)) return true;
  if (process.env.DENDROLOG_REQUIRE_BROWSER) throw new Error(`chromium is required here but ${CHROMIUM} is missing: apt-get install chromium`);
  process.stdout.write(`\nSKIPPED browser test: ${CHROMIUM} not found; install Debian's package "chromium" (apt-get install chromium) to run it\n\n`);
  return false;
}

/** Launch flags for a closed network: no background traffic, no first-run work. */
export const CHROMIUM_ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
];
