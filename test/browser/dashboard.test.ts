import { execFile } from 'node:child_process';
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { DateTime } from 'luxon';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { jsonOf, startTestService, TEST_TIME_ZONE, type TestService } from '../server/testService.ts';
import { launchChromium, type Browser } from './chromium.ts';

// The dashboard in Debian's headless chromium, against the real service on the synthetic reading
// room (our invented scene, nobody real) played at 10× speed. Screenshots go to a temporary folder
// (or RESIDUUM_SCREENSHOTS) for a person to look at; nothing here judges pixels.
const run = promisify(execFile);
const CAMERA = 'reading-room';
const HOUR = 3_600_000;
const day = DateTime.now().setZone(TEST_TIME_ZONE).minus({ days: 2 }).toISODate()!;

let t: TestService;
let browser: Browser;
const shots = process.env.RESIDUUM_SCREENSHOTS ?? mkdtempSync(join(tmpdir(), 'residuum-screens-'));

/** The little of the DOM the page reads use (the test compiles without the DOM library). */
interface PageElement {
  readonly dataset: Record<string, string | undefined>;
  readonly textContent: string | null;
  querySelector(selector: string): PageElement | null;
  querySelectorAll(selector: string): Iterable<PageElement>;
}

interface LiveZone {
  id: string;
  name: string;
  shown: number;
  level: string;
  capacity?: number;
  personArea?: number;
}
async function liveZones(): Promise<LiveZone[]> {
  const state = await jsonOf(await fetch(`${t.base}/api/live`));
  return state.cameras.find((c: { camera: string }) => c.camera === CAMERA).zones;
}

async function signIn(page: Page): Promise<void> {
  await page.click('#key-button');
  await page.fill('#key-input', t.adminKey);
  await page.click('#key-use');
  await page.waitForSelector('#role[data-role="admin"]');
}

/** Clicks the canvas at normalised coordinates. */
async function clickAt(page: Page, x: number, y: number): Promise<void> {
  const box = (await page.locator('#zone-canvas').boundingBox())!;
  await page.mouse.click(box.x + x * box.width, box.y + y * box.height);
}

beforeAll(async () => {
  t = await startTestService({ speed: 10, offlineCamera: true });
  // Hourly history on a past day for the CSV comparison: 3 people 09:00–10:00 in the tables zone.
  const nine = DateTime.fromISO(`${day}T09:00`, { zone: TEST_TIME_ZONE }).toMillis();
  t.service.store.insertSamples([
    { camera: CAMERA, zone: 'tables', kind: 'count', time: nine + HOUR, intervalMs: HOUR, value: 3 },
    { camera: CAMERA, zone: 'entrance', kind: 'count', time: nine + HOUR / 4, intervalMs: HOUR / 4, value: 1.5 },
  ]);
  browser = await launchChromium();
  console.log(`dashboard screenshots: ${shots}`);
});

afterAll(async () => {
  await browser?.close();
  await t?.stop();
});

describe('dashboard in chromium', () => {
  it('shows the live counts of the synthetic scene as the API has them, without console errors', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/`);
    await page.waitForSelector(`.camera[data-camera="${CAMERA}"][data-status="counting"] .zone`);
    /** What the page shows: the frame time of its state and each zone's number and level. */
    const pageState = () =>
      page.$eval(`.camera[data-camera="${CAMERA}"]`, (el: PageElement) => ({
        frameAt: Number(el.dataset.frameAt),
        zones: [...el.querySelectorAll('.zone')].map((e) => ({ id: e.dataset.zone!, level: e.dataset.level!, shown: Number(e.querySelector('[data-role="shown"]')!.textContent) })),
      }));
    // The API's states, polled while the page is read, by the time of their last frame.
    const states: { frameAt: number; shown: Map<string, number> }[] = [];
    let polling = true;
    const poller = (async () => {
      while (polling) {
        const state = await jsonOf(await fetch(`${t.base}/api/live`));
        const c = state.cameras.find((q: { camera: string }) => q.camera === CAMERA);
        states.push({ frameAt: c.lastFrameAt, shown: new Map(c.zones.map((z: LiveZone) => [z.id, z.shown])) });
        await new Promise((r) => setTimeout(r, 20));
      }
    })();
    const capacity = Object.fromEntries((await liveZones()).map((z) => [z.id, z.capacity!]));
    let close = 0;
    let compared = 0;
    let gap = 0;
    const seen = new Set<string>();
    const compare = async () => {
      const shown = await pageState();
      // Wait until the API was polled past the page's frame, then take the API state nearest to it.
      while (!states.some((s) => s.frameAt >= shown.frameAt)) await new Promise((r) => setTimeout(r, 20));
      const nearest = states.reduce((best, s) => (Math.abs(s.frameAt - shown.frameAt) < Math.abs(best.frameAt - shown.frameAt) ? s : best));
      gap = Math.max(gap, Math.abs(nearest.frameAt - shown.frameAt));
      expect(shown.zones.map((z) => z.id)).toEqual([...nearest.shown.keys()]);
      for (const z of shown.zones) {
        compared++;
        if (Math.abs(z.shown - nearest.shown.get(z.id)!) <= 1) close++;
        // The page's level is the one its own number has (near from 80 % of capacity, over above it).
        expect(z.level).toBe(z.shown > capacity[z.id] ? 'over' : z.shown >= 0.8 * capacity[z.id] ? 'near' : 'below');
      }
      seen.add(JSON.stringify(shown.zones.map((z) => z.shown)));
    };
    try {
      for (let round = 0; round < 8; round++) {
        await compare();
        await page.waitForTimeout(500);
      }
      // After a refresh the page shows the current state again.
      await page.reload();
      await page.waitForSelector(`.camera[data-camera="${CAMERA}"][data-status="counting"] .zone`);
      for (let round = 0; round < 8; round++) {
        await compare();
        await page.waitForTimeout(500);
      }
    } finally {
      polling = false;
      await poller;
    }
    console.log(`page vs API: ${close}/${compared} within one person; frames at most ${gap} ms apart`);
    // Compared at (nearly) the same frame, the page and the API agree within one person.
    expect(close / compared).toBeGreaterThanOrEqual(0.9);
    // The page follows the scene: what it shows changed while people came and went.
    expect(seen.size).toBeGreaterThan(1);
    // A camera that delivers nothing shows as offline, its zone without a number (never 0).
    const door = page.locator('.camera[data-camera="door"][data-status="offline"]');
    await door.waitFor();
    expect(await door.locator('.pill').textContent()).toBe('Offline');
    expect(await door.locator('.why').textContent()).toMatch(/sends no pictures.*folder not found/);
    expect(await door.locator('[data-role="shown"]').textContent()).toBe('—');
    expect(await door.locator('.zone').getAttribute('data-level')).toBe('unknown');
    await page.screenshot({ path: join(shots, 'now.png'), fullPage: true });
    expect(await page.locator('footer').innerText()).toMatch(/authority having jurisdiction governs/);
    expect(errors).toEqual([]);
    await page.close();
  });

  it('downloads the same CSV bytes as `residuum export` for the same range', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/#/history`);
    await page.waitForSelector('#history-zone option[value="reading-room/tables"]', { state: 'attached' });
    await page.selectOption('#history-zone', 'reading-room/tables');
    await page.fill('#history-from', day);
    await page.fill('#history-to', day);
    await page.click('#history-form button[type="submit"]');
    await page.waitForSelector('#history-table tbody tr:not(.nodata)');
    await page.screenshot({ path: join(shots, 'history.png'), fullPage: true });

    const waiting = page.waitForEvent('download');
    await page.click('#history-download');
    const download = await waiting;
    const fromPage = readFileSync((await download.path())!);
    const cli = await run(process.execPath, ['bin/residuum.js', 'export', '--data', t.dataDir, '--from', day, '--to', day], { encoding: 'buffer' });
    expect(fromPage.equals(cli.stdout as Buffer)).toBe(true);
    const nine = DateTime.fromISO(`${day}T09:00`, { zone: TEST_TIME_ZONE }).toISO({ suppressMilliseconds: true });
    expect(fromPage.toString('utf8')).toContain(`${nine},reading-room,tables,3,3,3,1,1,1\r\n`);
    expect(download.suggestedFilename()).toBe(`residuum-hourly-${day}-${day}.csv`);
    expect(errors).toEqual([]);
    await page.close();
  });

  it('refuses a change without the admin key: the page says so, the API answers 401', async () => {
    const { page, errors } = await browser.newPage();
    const before = (await liveZones()).map((z) => z.id);
    await page.goto(`${t.base}/#/zones`);
    await page.waitForSelector('#zone-list button[data-zone="tables"]');
    expect(await page.isVisible('#zones-admin-note')).toBe(true);
    await page.click('[data-tool="draw"]');
    await clickAt(page, 0.1, 0.1);
    await clickAt(page, 0.3, 0.1);
    await clickAt(page, 0.2, 0.3);
    await clickAt(page, 0.1, 0.1);
    await page.waitForSelector('#zone-list button[data-zone="zone-4"]');
    await page.click('#zones-save');
    await page.waitForSelector('#zones-error:not(:empty)');
    expect(await page.textContent('#zones-error')).toMatch(/^Not allowed: this needs the admin key/);
    const api = await fetch(`${t.base}/api/cameras/${CAMERA}/zones`, { method: 'PUT', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify({ zones: [] }) });
    expect(api.status).toBe(401);
    expect((await liveZones()).map((z) => z.id)).toEqual(before);
    await page.screenshot({ path: join(shots, 'refused.png'), fullPage: true });
    // The refused request itself is the only error chromium reports.
    expect(errors.filter((e) => !/status of 401/.test(e))).toEqual([]);
    expect(errors.length).toBeGreaterThan(0);
    await page.close();
  });

  it('draws a zone, marks one person, saves, and the service counts the new zone', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/`);
    await signIn(page);
    await page.goto(`${t.base}/#/zones`);
    await page.waitForSelector('#zone-canvas[data-background="shown"]');
    await page.check('#mask-toggle');
    await page.waitForTimeout(1500);
    await page.screenshot({ path: join(shots, 'zones-mask.png'), fullPage: true });
    await page.uncheck('#mask-toggle');

    await page.click('[data-tool="draw"]');
    const corners: [number, number][] = [[0.55, 0.08], [0.9, 0.08], [0.9, 0.3], [0.55, 0.3]];
    for (const [x, y] of corners) await clickAt(page, x, y);
    await clickAt(page, corners[0][0], corners[0][1]);
    await page.waitForSelector('#zone-list button[data-zone="zone-4"]');

    // A bad id is refused by the server, naming the field.
    await page.fill('#zf-id', 'bad id!');
    await page.click('#zones-save');
    await page.waitForSelector('#zones-error:not(:empty)');
    expect(await page.textContent('#zones-error > span')).toBe('Not saved. Zone “New zone 4”, short id: use 1 to 64 letters, digits, “-” or “_”, starting with a letter or digit (now "bad id!").');
    expect(await page.textContent('#zones-error code')).toMatch(/zones\[3\]\.id must be/);

    await page.fill('#zf-id', 'window-seat');
    await page.fill('#zf-name', 'Window seat');
    await page.fill('#zf-capacity', '2');
    // One person: a box from (0.6, 0.1) to (0.7, 0.25) of the frame → 0.1 × 0.15 = 0.015.
    await page.click('[data-tool="person"]');
    const box = (await page.locator('#zone-canvas').boundingBox())!;
    await page.mouse.move(box.x + 0.6 * box.width, box.y + 0.1 * box.height);
    await page.mouse.down();
    await page.mouse.move(box.x + 0.65 * box.width, box.y + 0.2 * box.height, { steps: 4 });
    await page.mouse.move(box.x + 0.7 * box.width, box.y + 0.25 * box.height, { steps: 4 });
    await page.mouse.up();
    const personArea = Number(await page.inputValue('#zf-personarea'));
    expect(personArea).toBeCloseTo(0.015, 3);
    await page.screenshot({ path: join(shots, 'zones-drawn.png'), fullPage: true });

    await page.click('#zones-save');
    await page.waitForSelector('#zones-ok:text-matches("^Saved")');
    expect(await page.textContent('#zones-error')).toBe('');

    const added = (await liveZones()).find((z) => z.id === 'window-seat');
    expect(added).toMatchObject({ name: 'Window seat', capacity: 2 });
    const stored = t.service.store.getZone(CAMERA, 'window-seat')!.zone;
    stored.polygon.forEach((p, i) => {
      expect(p[0]).toBeCloseTo(corners[i][0], 2);
      expect(p[1]).toBeCloseTo(corners[i][1], 2);
    });
    expect(stored.personArea).toBeCloseTo(0.015, 3);
    await page.waitForSelector('#zone-history td:text("window-seat")');

    // The live view lists it too.
    await page.goto(`${t.base}/#/now`);
    await page.waitForSelector(`.zone[data-camera="${CAMERA}"][data-zone="window-seat"]`);
    // The deliberately bad id above is the only error chromium reports.
    expect(errors.filter((e) => !/status of 400/.test(e))).toEqual([]);
    await page.close();
  });

  it('shows the capacity helper with its caution, and the privacy notice with the retention', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/#/capacity`);
    await page.waitForSelector('#cap-use option[value="library-reading"]', { state: 'attached' });
    await page.selectOption('#cap-use', 'library-reading');
    await page.fill('#cap-area', '100');
    await page.selectOption('#cap-unit', 'm2');
    await page.click('#capacity-form button[type="submit"]');
    // check: 100 m² ÷ (50 ft² × 0.09290304 m²/ft²) = 21.53 → 22 (IBC 2021 Table 1004.5, recalled from memory)
    await page.waitForSelector('[data-role="occupants"]');
    expect(await page.textContent('[data-role="occupants"]')).toBe('22 people');
    expect(await page.textContent('#cap-result')).toMatch(/authority having jurisdiction governs/);
    await page.screenshot({ path: join(shots, 'capacity.png'), fullPage: true });
    await page.goto(`${t.base}/privacy.html`);
    await page.waitForSelector('#retention:text-matches("day")');
    expect(await page.textContent('#retention')).toBe('30 days');
    await page.screenshot({ path: join(shots, 'privacy.png'), fullPage: true });
    expect(errors).toEqual([]);
    await page.close();
  });
});
