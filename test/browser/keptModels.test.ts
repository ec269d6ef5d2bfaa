import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { stringify } from 'yaml';
import { startService, type RunningService } from '../../src/commands/run.ts';
import { loadConfig } from '../../src/config/loadConfig.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { mulberry } from '../helpers/random.ts';
import { READING_ROOM_ZONES } from '../server/testService.ts';
import { dropSnapshots, noiseFrames } from '../service/dropSnapshots.ts';
import { waitUntil } from '../service/waitUntil.ts';
import { launchChromium, type Browser } from './chromium.ts';

// "Learn again" in Debian's headless chromium when the new empty scene turns out poor, and going
// back to a kept one with the keyboard. The camera is a drop folder fed with our synthetic reading
// room (invented, nobody real) and then with noise, snapshot times 100 ms apart. Screenshots go to
// a temporary folder (or RESIDUUM_SCREENSHOTS) for a person to look at; nothing here judges pixels.
const size = { width: 160, height: 120 };
const scene = createScene('reading-room', size);
const root = mkdtempSync(join(tmpdir(), 'residuum-kept-'));
const drop = join(root, 'drop');
mkdirSync(drop);
const snapshots = dropSnapshots(drop, size, Date.now() - 3_600_000);
const shots = process.env.RESIDUUM_SCREENSHOTS ?? mkdtempSync(join(tmpdir(), 'residuum-screens-'));

let service: RunningService;
let browser: Browser;
let base: string;

beforeAll(async () => {
  const configFile = join(root, 'residuum.yaml');
  writeFileSync(
    configFile,
    stringify({
      site: { name: 'Kept models test', timeZone: 'UTC' },
      server: { host: '127.0.0.1', port: 0 },
      cameras: [{ id: 'door', name: 'Door', source: { kind: 'drop-folder', path: drop, scanIntervalMs: 50, settleMs: 0 }, size: [size.width, size.height], learnSeconds: 4, zones: READING_ROOM_ZONES }],
    }),
  );
  service = await startService(loadConfig(configFile), { dataDir: join(root, 'data'), port: 0 });
  base = `http://127.0.0.1:${service.port}`;
  // The first start learns the empty scene from the first 4 s of snapshots.
  await snapshots.upload(Array.from({ length: 45 }, (_, i) => scene.emptyFrameAt(i * 70).data));
  await waitUntil(() => service.control.learnStatus('door')?.state === 'done', { what: 'the first learning' });
  browser = await launchChromium();
  console.log(`kept-models screenshots: ${shots}`);
});

afterAll(async () => {
  await browser?.close();
  await service?.stop();
  rmSync(root, { recursive: true, force: true });
});

describe('kept empty scenes in chromium', () => {
  it('says why a new empty scene was not used, lists the kept ones and goes back to one from the keyboard', async () => {
    const { page, errors } = await browser.newPage();
    await page.setViewportSize({ width: 1280, height: 800 });
    await page.goto(`${base}/#/zones`);
    // Without the key: no list, a hint to enter it.
    await page.waitForSelector('#kept-hint:has-text("admin key")');
    await page.click('#key-button');
    await page.fill('#key-input', service.newTokens.admin!);
    await page.click('#key-use');
    await page.waitForSelector('#role[data-role="admin"]');
    await page.waitForSelector('#kept-list .kept[data-active="true"]');
    const firstId = service.store.activeModelId('door');

    // "Learn again" from the page, then snapshots of no one scene.
    await page.fill('#learn-seconds', '2');
    await page.click('#learn-start');
    await waitUntil(() => service.control.learnStatus('door')?.state === 'learning', { what: 'learning to start' });
    await snapshots.upload(noiseFrames(30, size, mulberry(3)));
    await waitUntil(() => service.control.learnStatus('door')?.state === 'rejected', { what: 'the learning to be rejected' });
    const reason = service.control.learnStatus('door')!.reason!;
    // The page polls the status each second: its note gives the reason in plain words.
    await page.waitForSelector('#learn-note[data-tone="rejected"]:not([hidden])');
    const note = await page.textContent('#learn-note');
    expect(note).toContain('was not used');
    expect(note).toContain(reason);
    await page.waitForSelector('#kept-list .kept:nth-child(2)');
    const rows = await page.$$eval('#kept-list .kept', (els) =>
      els.map((e) => ({
        model: Number((e as unknown as { dataset: Record<string, string> }).dataset.model),
        active: (e as unknown as { dataset: Record<string, string> }).dataset.active === 'true',
        text: e.textContent ?? '',
        buttons: e.querySelectorAll('button').length,
      })),
    );
    // Newest first: the rejected one (no "In use", a button), then the one in use (no button).
    expect(rows.map((r) => [r.model, r.active, r.buttons])).toEqual([
      [service.control.learnStatus('door')!.modelId, false, 1],
      [firstId, true, 0],
    ]);
    expect(rows[0].text).toContain('Not used when learned');
    expect(rows[0].text).toContain('Poor');
    expect(rows[1].text).toContain('In use');
    await page.screenshot({ path: join(shots, 'kept-rejected-1280.png'), fullPage: true });
    await page.setViewportSize({ width: 390, height: 844 });
    await page.locator('#learn-panel').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(shots, 'kept-rejected-390.png'), fullPage: true });
    await page.setViewportSize({ width: 1280, height: 800 });

    // Back to a kept model from the keyboard: Tab reaches "Use this one", Enter chooses it (a
    // poor one asks first). The camera's thread counts with it then.
    page.once('dialog', (d) => void d.accept());
    await page.focus('#learn-start');
    let reached = false;
    for (let i = 0; i < 12 && !reached; i++) {
      await page.keyboard.press('Tab');
      reached = (await page.locator('#kept-list .kept-use:focus').count()) === 1;
    }
    expect(reached).toBe(true);
    await page.keyboard.press('Enter');
    await page.waitForSelector(`#kept-list .kept[data-model="${rows[0].model}"][data-active="true"]`);
    expect(await page.textContent('#kept-ok')).toMatch(/^Counting now uses the empty scene learned /);
    expect(service.store.activeModelId('door')).toBe(rows[0].model);
    await waitUntil(() => service.cameras.get('door')!.modelId() === rows[0].model, { what: 'the camera to count with the chosen model' });
    expect(service.store.listEvents({ camera: 'door', type: 'model-activated' }).at(-1)?.detail).toMatchObject({ model: rows[0].model, by: 'admin' });
    // The note on the last learning no longer says the camera kept the other one.
    await page.waitForSelector('#learn-note:has-text("has since been chosen")');
    await page.screenshot({ path: join(shots, 'kept-chosen-1280.png'), fullPage: true });
    await page.setViewportSize({ width: 390, height: 844 });
    await page.locator('#kept-list').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(shots, 'kept-chosen-390.png'), fullPage: true });
    expect(errors).toEqual([]);
  });
});
