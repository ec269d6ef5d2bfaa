import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';

/** Debian's chromium (apt-get install chromium); never a downloaded browser build. */
export const CHROMIUM = '/usr/bin/chromium';

export interface Browser {
  readonly context: BrowserContext;
  /** A new tab that records console errors and uncaught page errors. */
  newPage(): Promise<{ page: Page; errors: string[] }>;
  close(): Promise<void>;
}

/** Headless chromium with a fresh profile folder, deleted on close. */
export async function launchChromium(): Promise<Browser> {
  if (!existsSync(CHROMIUM)) throw new Error(`${CHROMIUM} is missing: install Debian's chromium (apt-get install chromium; scripts/ensure-test-deps.sh does)`);
  const profile = mkdtempSync(join(tmpdir(), 'residuum-chromium-'));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM,
    headless: true,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'],
    viewport: { width: 1280, height: 900 },
    acceptDownloads: true,
  });
  return {
    context,
    async newPage() {
      const page = await context.newPage();
      const errors: string[] = [];
      page.on('console', (m) => {
        if (m.type() === 'error') errors.push(`console: ${m.text()}`);
      });
      page.on('pageerror', (e) => errors.push(`page: ${e.message}`));
      return { page, errors };
    },
    async close() {
      await context.close();
      rmSync(profile, { recursive: true, force: true });
    },
  };
}
