import { createServer, type Server } from 'node:http';
import { mkdtempSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestService, type TestService } from '../server/testService.ts';
import { waitUntil } from '../service/waitUntil.ts';
import { launchChromium, type Browser } from './chromium.ts';

// "Add a camera" in Debian's chromium: a local HTTP server plays a camera (flat grey 640×480
// JPEGs of our own); the service is the real one with the synthetic reading room.

let svc: TestService;
let camera: Server;
let cameraUrl: string;
let browser: Browser;
const shots = mkdtempSync(join(tmpdir(), 'residuum-add-camera-shots-'));

beforeAll(async () => {
  const jpeg = await sharp({ create: { width: 640, height: 480, channels: 3, background: { r: 100, g: 100, b: 100 } } }).jpeg().toBuffer();
  camera = createServer((req, res) => {
    if (req.url === '/snap.jpg') return void res.writeHead(200, { 'content-type': 'image/jpeg' }).end(jpeg);
    res.writeHead(404, { 'content-type': 'text/plain' }).end('not found');
  });
  await new Promise<void>((done) => camera.listen(0, '127.0.0.1', done));
  cameraUrl = `http://127.0.0.1:${(camera.address() as AddressInfo).port}`;
  svc = await startTestService();
  browser = await launchChromium();
  console.log(`add-camera screenshots: ${shots}`);
}, 120_000);

afterAll(async () => {
  await browser?.close();
  await svc?.stop();
  await new Promise<void>((done) => (camera ? camera.close(() => done()) : done()));
});

describe('adding a camera from the dashboard', () => {
  it('tells what is wrong with an address, adds a camera that answers with a picture, and removes it', async () => {
    const { page, errors } = await browser.newPage();
    await page.setViewportSize({ width: 1280, height: 800 });
    await page.goto(`${svc.base}/#/zones`);
    await page.click('#key-button');
    await page.fill('#key-input', svc.adminKey);
    await page.click('#key-use');
    await page.waitForSelector('#role[data-role="admin"]');
    await page.waitForSelector('#add-camera');

    // An address that answers 404: the service's reason, naming the field.
    await page.fill('#ac-id', 'side');
    await page.fill('#ac-name', 'Side entrance');
    await page.fill('#ac-url', `${cameraUrl}/wrong.jpg`);
    await page.click('#ac-add');
    await page.waitForSelector('#add-camera-error:not(:empty)');
    expect(await page.textContent('#add-camera-error')).toMatch(/^Camera address gives no usable picture: .*HTTP 404 Not Found\.?$/);
    expect(svc.service.cameras.has('side')).toBe(false);
    await page.locator('#add-camera').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(shots, 'add-camera-error-1280.png'), fullPage: true });

    // The right address: added and running.
    await page.fill('#ac-url', `${cameraUrl}/snap.jpg`);
    await page.fill('#ac-learn', '5');
    await page.click('#ac-add');
    await page.waitForSelector('#add-camera-ok:not(:empty)');
    const ok = await page.textContent('#add-camera-ok');
    expect(ok).toBe('Added “Side entrance”. The camera sends 640×480 pictures; they are counted at 320×240. It is learning its empty scene for 5 s: keep the view empty. Reload the page to draw its zones.');
    expect(svc.service.cameras.has('side')).toBe(true);
    await waitUntil(() => svc.service.cameras.get('side')!.live().state !== 'connecting', { what: 'the added camera running', timeoutMs: 30_000 });
    await page.screenshot({ path: join(shots, 'add-camera-added-1280.png'), fullPage: true });
    await page.setViewportSize({ width: 390, height: 844 });
    await page.locator('#add-camera').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(shots, 'add-camera-added-390.png'), fullPage: true });
    await page.locator('#add-camera').screenshot({ path: join(shots, 'add-camera-panel-390.png') });
    // The panel fits a phone: nothing in it reaches past the screen's right edge, nothing scrolls sideways inside it.
    const fit = await page.$eval('#add-camera', (panel) => {
      const widest = Math.max(...[panel, ...panel.querySelectorAll('*')].map((e) => e.getBoundingClientRect().right));
      return { widest, overflow: panel.scrollWidth - panel.clientWidth };
    });
    expect(fit.widest).toBeLessThanOrEqual(390);
    expect(fit.overflow).toBe(0);

    // Remove it again from the page (the confirmation is accepted).
    page.once('dialog', (d) => void d.accept());
    await page.selectOption('#ac-remove-camera', 'side');
    await page.click('#ac-remove');
    await page.waitForSelector('#add-camera .ok:has-text("Removed")');
    expect(svc.service.cameras.has('side')).toBe(false);
    expect(errors.filter((e) => !/status of 400/.test(e))).toEqual([]);
    await page.close();
  }, 180_000);
});
