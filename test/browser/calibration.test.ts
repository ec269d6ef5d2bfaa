import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestService, type TestService } from '../server/testService.ts';
import { waitUntil } from '../service/waitUntil.ts';
import { launchChromium, type Browser } from './chromium.ts';

// "Check the count" in Debian's headless chromium, with the keyboard only, on the real service
// with the synthetic reading room (our invented scene; nobody real). Screenshots go to a
// temporary folder (or RESIDUUM_SCREENSHOTS) for a person to look at; nothing here judges pixels.
const shots = process.env.RESIDUUM_SCREENSHOTS ?? mkdtempSync(join(tmpdir(), 'residuum-screens-'));
let t: TestService;
let browser: Browser;

beforeAll(async () => {
  t = await startTestService();
  await waitUntil(() => t.service.control.cameras()[0]?.lastFrameAt !== undefined, { what: 'the first counted frame' });
  browser = await launchChromium();
  console.log(`check-the-count screenshots: ${shots}`);
}, 180_000);
afterAll(async () => {
  await browser?.close();
  await t?.stop();
});

describe('checking the count in chromium', () => {
  it('takes counts from the keyboard and says in words what they came to', async () => {
    const { page, errors } = await browser.newPage();
    await page.setViewportSize({ width: 1280, height: 800 });
    await page.goto(`${t.base}/#/zones`);
    await expect.poll(() => page.locator('#calibration-list').innerText()).toMatch(/Enter the admin key to give counts/);
    expect(await page.locator('#calibration-count').isDisabled()).toBe(true);
    await page.click('#key-button');
    await page.fill('#key-input', t.adminKey);
    await page.keyboard.press('Enter');
    await expect.poll(() => page.locator('#calibration-count').isDisabled()).toBe(false);

    await page.locator('#calibration-zone').focus();
    await page.keyboard.press('ArrowDown'); // Stacks aisle
    expect(await page.locator('#calibration-zone').inputValue()).toBe('stacks');
    for (const count of ['3', '4', '3', '4', '3']) {
      await page.locator('#calibration-count').focus();
      await page.keyboard.type(count);
      await page.keyboard.press('Enter');
      await expect.poll(() => page.locator('#calibration-ok').innerText()).toMatch(new RegExp(`^Saved: ${count} in Stacks aisle \\(the camera counted \\d+ by blob size at that moment\\)\\.$`));
      await expect.poll(() => page.locator('#calibration-count').inputValue()).toBe('');
    }
    const stacks = page.locator('#calibration-list li[data-zone="stacks"]');
    await expect.poll(() => stacks.innerText()).toMatch(/5 counts given\. (Counted from your counts: off by about [\d.]+ (person|people) when each is checked against the others, against [\d.]+ people by blob size\.|Counted by blob size, which is closer)/);
    await page.screenshot({ path: join(shots, 'check-the-count-1280.png'), fullPage: true });

    // A count that is not a whole number is refused in words, naming what to enter.
    await page.locator('#calibration-count').fill('2.5');
    await page.locator('#calibration-give').click();
    await expect.poll(() => page.locator('#calibration-error').innerText()).toMatch(/a whole number/);

    // Forgetting, from the keyboard.
    await stacks.getByRole('button', { name: 'Forget the counts given for Stacks aisle' }).focus();
    await page.keyboard.press('Enter');
    await expect.poll(() => page.locator('#calibration-ok').innerText()).toBe('5 counts for Stacks aisle forgotten; it is counted by blob size again.');
    await expect.poll(() => stacks.innerText()).toMatch(/0 counts given; 5 more needed/);

    await page.setViewportSize({ width: 390, height: 844 });
    await page.locator('#calibration-panel').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(shots, 'check-the-count-390.png'), fullPage: true });
    const panel = await page.locator('#calibration-panel').boundingBox();
    expect(panel!.x + panel!.width).toBeLessThanOrEqual(390);
    expect(errors).toEqual([]);
  }, 120_000);
});
