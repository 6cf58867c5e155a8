// Debian's Chromium, headless, for the page tests: never a downloaded browser, no background
// traffic (the tests also check that the pages load nothing from other servers).
import { chromium, type Browser } from 'playwright-core';

export function launchChromium(): Promise<Browser> {
  return chromium.launch({
    executablePath: '/usr/bin/chromium',
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--no-first-run'],
  });
}
