// Renders resources/build/icon.svg to resources/build/icon.png (1024 × 1024, transparent corners),
// the picture electron-builder makes every platform's icon from. Run after changing the SVG:
// node scripts/make-icon.ts (needs Debian's chromium, as the browser tests do).
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { chromium } from 'playwright-core';

const svg = readFileSync(fileURLToPath(new URL('../resources/build/icon.svg', import.meta.url)), 'utf8');
const browser = await chromium.launch({ executablePath: process.env['TRIMBENCH_CHROMIUM'] ?? '/usr/bin/chromium', args: ['--no-sandbox', '--disable-gpu'] });
try {
  const page = await browser.newPage({ viewport: { width: 1024, height: 1024 } });
  await page.setContent(`<html><body style="margin:0;background:transparent">${svg}</body></html>`);
  await page.locator('svg').screenshot({ path: fileURLToPath(new URL('../resources/build/icon.png', import.meta.url)), omitBackground: true });
} finally {
  await browser.close();
}
