import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { fitPersonArea } from '../../src/vision/fitPersonArea.ts';
import { jsonOf, startTestService, type TestService } from '../server/testService.ts';
import { launchChromium, type Browser } from './chromium.ts';

// Reference people in the zone editor, in Debian's headless chromium, against the real service on
// the synthetic reading room (our invented scene; only its learned empty scene is ever shown).
// Screenshots go to a temporary folder (or RESIDUUM_SCREENSHOTS) for a person to look at.
const CAMERA = 'reading-room';
let t: TestService;
let browser: Browser;
const shots = process.env.RESIDUUM_SCREENSHOTS ?? mkdtempSync(join(tmpdir(), 'residuum-screens-'));

interface Reference {
  x: number;
  y: number;
  area: number;
  height: number;
}
interface Rect {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
}

beforeAll(async () => {
  t = await startTestService({ speed: 10 });
  browser = await launchChromium();
});
afterAll(async () => {
  await browser?.close();
  await t?.stop();
});

async function entranceReferences(): Promise<Reference[] | undefined> {
  const { zones } = await jsonOf(await fetch(`${t.base}/api/cameras/${CAMERA}/zones`));
  return zones.find((z: { id: string }) => z.id === 'entrance').perspective;
}

/** A box as the zones API gives it back, as its corners. */
const rectOf = (r: Reference): Rect => ({ x0: r.x - r.area / r.height / 2, y0: r.y - r.height, x1: r.x + r.area / r.height / 2, y1: r.y });

describe('reference people in the zone editor', () => {
  it('places, drags, resizes and deletes boxes, shows the expected size, saves, and the zones API returns the boxes', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/`);
    await page.click('#key-button');
    await page.fill('#key-input', t.adminKey);
    await page.click('#key-use');
    await page.waitForSelector('#role[data-role="admin"]');
    await page.goto(`${t.base}/#/zones`);
    await page.waitForSelector('#zone-canvas[data-background="shown"]');
    await page.click('#zone-list button[data-zone="entrance"]');
    expect(await page.isVisible('#zf-refs')).toBe(true);
    expect(await page.textContent('#refs-summary')).toMatch(/^None: one person covers the same share everywhere/);
    await page.click('[data-tool="refs"]');

    const canvas = (await page.locator('#zone-canvas').boundingBox())!;
    const at = (x: number, y: number): [number, number] => [canvas.x + x * canvas.width, canvas.y + y * canvas.height];
    const drag = async (from: [number, number], to: [number, number]) => {
      await page.mouse.move(...at(...from));
      await page.mouse.down();
      await page.mouse.move(...at((from[0] + to[0]) / 2, (from[1] + to[1]) / 2), { steps: 3 });
      await page.mouse.move(...at(...to), { steps: 3 });
      await page.mouse.up();
    };
    const listed = () => page.locator('#refs-list li').count();

    // Two people: a farther one, feet at row 0.76, and a nearer one, feet at row 0.96.
    await drag([0.1, 0.62], [0.16, 0.76]);
    expect(await listed()).toBe(1);
    expect(await page.textContent('#refs-summary')).toMatch(/^One box so far/);
    await drag([0.18, 0.78], [0.26, 0.96]);
    expect(await listed()).toBe(2);

    // The guide: the size expected with feet under the pointer, as fitted to the two boxes.
    await page.mouse.move(...at(0.2, 0.9));
    const guide = await page.textContent('#refs-guide');
    // check: least squares of √area on the foot row through the two boxes (fitPersonArea, the server's fit)
    const expected = fitPersonArea([{ y: 0.76, area: 0.06 * 0.14 }, { y: 0.96, area: 0.08 * 0.18 }]).areaAt(0.9);
    const shown = Number(/: ([\d.]+) % of the picture/.exec(guide ?? '')![1]) / 100;
    expect(guide).toMatch(/^Expected person with feet here \(90 % down\)/);
    expect(Math.abs(shown - expected)).toBeLessThan(0.0003);

    // Drag the first box by its middle 0.02 right and 0.02 down.
    await drag([0.13, 0.7], [0.15, 0.72]);
    // Resize the second: select it, then drag its bottom-right corner from (0.26, 0.96) to (0.28, 0.94).
    await page.mouse.click(...at(0.22, 0.85));
    await drag([0.26, 0.96], [0.28, 0.94]);
    // A third box, deleted again with the Delete key on the canvas.
    await drag([0.22, 0.62], [0.27, 0.74]);
    expect(await listed()).toBe(3);
    await page.keyboard.press('Delete');
    expect(await listed()).toBe(2);
    expect(await page.textContent('#refs-summary')).toMatch(/^Expected person: [\d.]+ % of the picture at the zone's top edge, [\d.]+ % at its bottom edge/);
    await page.mouse.move(...at(0.2, 0.88));
    await page.screenshot({ path: join(shots, 'zones-references.png'), fullPage: true });

    await page.click('#zones-save');
    await page.waitForSelector('#zones-ok:text-matches("^Saved")');
    expect(await page.textContent('#zones-error')).toBe('');
    const saved = (await entranceReferences())!;
    expect(saved).toHaveLength(2);
    // Pointer positions land on whole CSS pixels (about 0.0015 of the canvas here).
    const want: Rect[] = [
      { x0: 0.12, y0: 0.64, x1: 0.18, y1: 0.78 },
      { x0: 0.18, y0: 0.78, x1: 0.28, y1: 0.94 },
    ];
    saved.forEach((r, i) => {
      const got = rectOf(r);
      for (const k of ['x0', 'y0', 'x1', 'y1'] as const) expect(Math.abs(got[k] - want[i][k])).toBeLessThan(0.004);
      expect(r.area).toBeCloseTo((got.x1 - got.x0) * (got.y1 - got.y0), 6);
    });
    // The store has the same boxes; the live view counts the zone with them.
    expect(t.service.store.getZone(CAMERA, 'entrance')!.zone.perspective).toEqual(saved);
    // After a reload the editor shows the saved boxes.
    await page.reload();
    await page.waitForSelector('#zone-list button[data-zone="entrance"]');
    await page.click('#zone-list button[data-zone="entrance"]');
    expect(await listed()).toBe(2);
    expect(errors).toEqual([]);
    await page.close();
  });

  it('fills boxes from the learned person size', async () => {
    // The scene plays at 10×: people seen alone pile up within seconds (the test's timeout bounds the wait).
    const size = () => fetch(`${t.base}/api/cameras/${CAMERA}/person-size`).then(jsonOf);
    while ((await size()).state !== 'ready') await new Promise((r) => setTimeout(r, 500));
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/`);
    await page.click('#key-button');
    await page.fill('#key-input', t.adminKey);
    await page.click('#key-use');
    await page.waitForSelector('#role[data-role="admin"]');
    await page.goto(`${t.base}/#/zones`);
    await page.waitForSelector('#zone-list button[data-zone="tables"]');
    await page.click('#zone-list button[data-zone="tables"]');
    // What the page is answered is what its boxes must follow.
    const answer = page.waitForResponse((r) => r.url().endsWith(`/api/cameras/${CAMERA}/person-size`));
    await page.click('#refs-learned');
    const learned = await (await answer).json();
    await page.waitForSelector('#refs-learned-note:text-matches("^Filled from the size learned from \\\\d+ people seen alone")');
    expect(await page.locator('#refs-list li').count()).toBe(3);
    await page.screenshot({ path: join(shots, 'zones-learned-size.png'), fullPage: true });
    await page.click('#zones-save');
    await page.waitForSelector('#zones-ok:text-matches("^Saved")');
    const { zones } = await jsonOf(await fetch(`${t.base}/api/cameras/${CAMERA}/zones`));
    const refs: Reference[] = zones.find((z: { id: string }) => z.id === 'tables').perspective;
    expect(refs).toHaveLength(3);
    // The tables zone spans rows 0.54–0.98: the boxes stand at 10, 50 and 90 % of where it overlaps
    // the rows the size was learned at, each the learned area there with the learned proportions.
    const lo = Math.max(0.54, learned.rows[0]);
    const hi = Math.min(0.98, learned.rows[1]);
    refs.forEach((r, i) => {
      expect(r.y).toBeCloseTo(lo + [0.1, 0.5, 0.9][i] * (hi - lo), 3);
      const area = (learned.intercept + learned.slope * r.y) ** 2;
      expect(Math.abs(r.area / area - 1)).toBeLessThan(0.01);
      expect(Math.abs((r.height * r.height) / r.area / learned.aspect - 1)).toBeLessThan(0.01);
      // In the middle of the zone (x 0.34–0.97), inside the frame.
      expect(r.x).toBeCloseTo(0.655, 3);
    });
    expect(errors).toEqual([]);
    await page.close();
  });
});
