import { mkdtempSync, readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { DateTime } from 'luxon';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { jsonOf, startTestService, TEST_TIME_ZONE, type TestService } from '../server/testService.ts';
import { launchChromium, type Browser } from './chromium.ts';

// The dashboard as a new user meets it, on a laptop (1280×800) and a phone (390×844), in Debian's
// headless chromium against the real service on the synthetic reading room (our invented scene,
// nobody real). Screenshots go to a temporary folder (or RESIDUUM_SCREENSHOTS) for a person to
// look at; accessibility is judged by axe-core, a general-purpose reference checker.
const CAMERA = 'reading-room';
const SIZES = [
  { name: 'laptop', width: 1280, height: 800 },
  { name: 'phone', width: 390, height: 844 },
] as const;
// check: axe-core (Deque), WCAG 2.1 A and AA rules; its file loaded from node_modules into each page.
const AXE = readFileSync(createRequire(import.meta.url).resolve('axe-core/axe.min.js'), 'utf8');

let t: TestService;
let browser: Browser;
const shots = process.env.RESIDUUM_SCREENSHOTS ?? mkdtempSync(join(tmpdir(), 'residuum-screens-'));

interface AxeResult {
  violations: { id: string; impact: string | null; help: string; nodes: { target: string[]; failureSummary?: string }[] }[];
}

/** axe-core's serious and critical findings on the page as it is now, one line each. */
async function seriousFindings(page: Page): Promise<string[]> {
  // page.evaluate runs outside the page's Content-Security-Policy, which refuses inline scripts.
  await page.evaluate(AXE);
  const result = (await page.evaluate('axe.run(document, { resultTypes: ["violations"] })')) as AxeResult;
  return result.violations
    .filter((v) => v.impact === 'serious' || v.impact === 'critical')
    .map((v) => `${v.impact} ${v.id} (${v.help}): ${v.nodes.map((n) => `${n.target.join(' ')} — ${n.failureSummary ?? ''}`).join(' | ')}`);
}

/** How far the page reaches past the window's right edge, CSS px (0: no sideways scrolling). */
async function sidewaysOverflow(page: Page): Promise<number> {
  return page.evaluate('document.documentElement.scrollWidth - window.innerWidth') as Promise<number>;
}

async function signIn(page: Page): Promise<void> {
  await page.click('#key-button');
  await page.fill('#key-input', t.adminKey);
  await page.click('#key-use');
  await page.waitForSelector('#role[data-role="admin"]');
}

/** Presses Tab (or Shift+Tab) until `selector` has the focus, as a keyboard user would. */
async function tabTo(page: Page, selector: string, back = false): Promise<void> {
  for (let i = 0; i < 80; i++) {
    if (await page.evaluate(`document.activeElement && document.activeElement.matches(${JSON.stringify(selector)})`)) return;
    await page.keyboard.press(back ? 'Shift+Tab' : 'Tab');
  }
  throw new Error(`Tab never reached ${selector}`);
}

beforeAll(async () => {
  t = await startTestService({ speed: 10, offlineCamera: true });
  browser = await launchChromium();
  console.log(`dashboard screenshots: ${shots}`);
});

afterAll(async () => {
  await browser?.close();
  await t?.stop();
});

describe('dashboard on a laptop and a phone', () => {
  for (const size of SIZES) {
    it(`${size.name} ${size.width}×${size.height}: axe finds nothing serious or critical on any view, and nothing scrolls sideways`, async () => {
      const { page, errors } = await browser.newPage();
      await page.setViewportSize({ width: size.width, height: size.height });
      const findings: string[] = [];
      const overflow: string[] = [];
      const look = async (view: string) => {
        await page.screenshot({ path: join(shots, `${view}-${size.name}.png`), fullPage: true });
        findings.push(...(await seriousFindings(page)).map((f) => `${view}: ${f}`));
        const wide = await sidewaysOverflow(page);
        if (wide > 0) overflow.push(`${view}: ${wide} px`);
      };
      await page.goto(`${t.base}/`);
      await page.waitForSelector(`.camera[data-camera="${CAMERA}"][data-status="counting"] .zone`);
      await page.waitForSelector('#events-list li');
      await look('now');
      await page.goto(`${t.base}/#/history`);
      await page.waitForSelector('#history-table tbody tr');
      await look('history');
      await page.goto(`${t.base}/#/zones`);
      await page.waitForSelector('#zone-list button[data-zone="tables"]');
      await look('zones-viewer');
      await signIn(page);
      await page.waitForSelector('#zone-canvas[data-background="shown"]');
      await page.waitForSelector('#kept-list .kept');
      await page.click('#model-technical summary');
      await page.click('.tuning summary');
      await page.click('.keys summary');
      await look('zones-admin');
      await page.goto(`${t.base}/#/capacity`);
      await page.waitForSelector('#cap-use option', { state: 'attached' });
      await page.fill('#cap-area', '100');
      await page.click('#capacity-form button[type="submit"]');
      await page.waitForSelector('#cap-zone option', { state: 'attached' });
      await look('capacity');
      await page.goto(`${t.base}/privacy.html`);
      await page.waitForSelector('#retention:text-matches("day")');
      await look('privacy');
      expect(findings).toEqual([]);
      expect(overflow).toEqual([]);
      expect(errors).toEqual([]);
      await page.close();
    });
  }

  it('speaks plainly: jargon stays behind a disclosure, figures say what they are, the cautions stay', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/`);
    await page.waitForSelector(`.camera[data-camera="${CAMERA}"][data-status="counting"] .zone`);
    const zone = page.locator(`.zone[data-camera="${CAMERA}"][data-zone="tables"]`);
    expect(await zone.locator('.of').textContent()).toMatch(/^of 10 · (person|people) now$/);
    expect(await page.textContent('.legend-line')).toMatch(/Today's peak.*hourly|“mean”.*“peak”/s);
    // Today's peak: a stored sample and its time, or the live count itself when it is beyond them.
    await page.waitForSelector(`.zone[data-camera="${CAMERA}"][data-zone="tables"] [data-role="today"]:text-matches("^Today's peak( [0-9.]+ (person|people) at [0-9]{2}:[0-9]{2}|: now, [0-9]+ (person|people))$")`, { timeout: 30_000 });
    expect(await page.locator('footer').innerText()).toMatch(/authority having jurisdiction governs/);
    expect(await page.locator('footer').innerText()).toMatch(/local privacy and workplace-monitoring rules/);

    await signIn(page);
    await page.goto(`${t.base}/#/zones`);
    await page.waitForSelector('#kept-list .kept');
    await page.waitForSelector('#model-figures dd');
    const jargon = /noise units|eigen|components|variance|residual|threshold/i;
    // innerText leaves out what a closed <details> hides.
    expect(await page.locator('#view-zones').innerText()).not.toMatch(jargon);
    await page.click('#model-technical summary');
    await page.click('.tuning summary');
    expect(await page.locator('#model-technical').innerText()).toMatch(/Eigen-images kept \(PCA components\)/);
    expect(await page.locator('.tuning').innerText()).toMatch(/noise units/);
    expect(errors).toEqual([]);
    await page.close();
  });

  it('says in the words of the form why a save was refused, the server text one click away', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/`);
    await signIn(page);
    await page.goto(`${t.base}/#/zones`);
    await page.waitForSelector('#zone-list button[data-zone="entrance"]');
    await page.click('#zone-list button[data-zone="entrance"]');
    // The entrance is (4, 60) (30, 60) (30, 98) (4, 98) in %; swapping the lower corners' x crosses its outline.
    await page.fill('#corner-list li[data-corner="2"] input[data-axis="0"]', '4');
    await page.fill('#corner-list li[data-corner="3"] input[data-axis="0"]', '30');
    await page.click('#zones-save');
    await page.waitForSelector('#zones-error:not(:empty)');
    // check: the bow-tie (4, 60) (30, 60) (4, 98) (30, 98) crosses itself, worked by hand
    expect(await page.locator('#zones-error > span').textContent()).toBe('Not saved. Zone “Entrance”, corners: the outline crosses itself. Move a corner so that no two edges cross.');
    await page.click('#zones-error summary');
    expect(await page.textContent('#zones-error code')).toMatch(/zones\[0\]\.polygon is self-intersecting/);
    await page.click('#zones-discard');
    expect(errors.filter((e) => !/status of 400/.test(e))).toEqual([]);
    await page.close();
  });

  it('draws a zone and edits its corners with the keyboard alone (WCAG 2.1.1, 2.5.7), and saves it', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/`);
    await signIn(page);
    await page.goto(`${t.base}/#/zones`);
    await page.waitForSelector('#zone-canvas[data-background="shown"]');
    await page.waitForSelector('#zone-list button[data-zone="tables"]');
    await page.locator('#zones-camera').focus();

    await tabTo(page, 'button[data-tool="draw"]');
    await page.keyboard.press('Enter');
    await tabTo(page, '#zone-canvas');
    // The cross starts in the middle (0.5, 0.5); 1 % a step, 5 % with Shift.
    const press = async (key: string, times: number) => {
      for (let i = 0; i < times; i++) await page.keyboard.press(key);
    };
    await press('Shift+ArrowUp', 8); // (0.5, 0.1)
    await press('Shift+ArrowRight', 2); // (0.6, 0.1)
    await page.keyboard.press('Space');
    await press('Shift+ArrowRight', 6); // (0.9, 0.1)
    await page.keyboard.press('Space');
    await press('Shift+ArrowDown', 4); // (0.9, 0.3)
    await page.keyboard.press('Space');
    await press('Shift+ArrowLeft', 6); // (0.6, 0.3)
    await page.keyboard.press('Space');
    expect(await page.textContent('#canvas-status')).toBe('Corner 4 placed at 60.0 % from the left, 30.0 % from the top. Enter closes the zone.');
    await page.keyboard.press('Enter');
    await page.waitForSelector('#zone-list button[data-zone="zone-4"]');
    // Closing the zone puts the focus on its name; the id follows the name until typed by hand.
    await page.keyboard.press('Control+A');
    await page.keyboard.type('Quiet corner');
    expect(await page.inputValue('#zf-id')).toBe('quiet-corner');

    // Back to the picture: choose corner 2 (C twice) and move it 2 % right and 1 % down.
    await tabTo(page, '#zone-canvas', true);
    expect(await page.getAttribute('button[data-tool="select"]', 'aria-pressed')).toBe('true');
    await page.keyboard.press('c');
    await page.keyboard.press('c');
    await press('ArrowRight', 4);
    await press('ArrowDown', 2);
    expect(await page.textContent('#canvas-status')).toBe('Corner 2 of 4 of Quiet corner: 92.0 % from the left, 11.0 % from the top');
    // Insert adds a corner after it, halfway to corner 3; Delete takes it away again.
    await page.keyboard.press('Insert');
    expect(await page.locator('#corner-list li').count()).toBe(5);
    await page.keyboard.press('Delete');
    expect(await page.locator('#corner-list li').count()).toBe(4);
    // The typed corners follow the keys.
    expect(await page.inputValue('#corner-list li[data-corner="1"] input[data-axis="0"]')).toBe('92');
    expect(await page.inputValue('#corner-list li[data-corner="1"] input[data-axis="1"]')).toBe('11');

    // Corner 1 typed as numbers: 55 % from the left, 8 % from the top.
    await tabTo(page, '#corner-list li[data-corner="0"] input[data-axis="0"]');
    await page.keyboard.press('Control+A');
    await page.keyboard.type('55');
    await page.keyboard.press('Tab');
    await page.keyboard.press('Control+A');
    await page.keyboard.type('8');
    await tabTo(page, '#zones-save');
    await page.keyboard.press('Enter');
    await page.waitForSelector('#zones-ok:text-matches("^Saved")');

    const stored = t.service.store.getZone(CAMERA, 'quiet-corner')!.zone;
    // check: worked by hand from the keys pressed (cross 1 % a step, 5 % with Shift; corners 0.5 % a step) and the numbers typed
    const expected = [[0.55, 0.08], [0.92, 0.11], [0.9, 0.3], [0.6, 0.3]];
    expect(stored.polygon).toHaveLength(4);
    stored.polygon.forEach((p, i) => {
      expect(p[0]).toBeCloseTo(expected[i][0], 6);
      expect(p[1]).toBeCloseTo(expected[i][1], 6);
    });
    await page.screenshot({ path: join(shots, 'zones-keyboard.png'), fullPage: true });

    // The change is in the camera's event log on Now, by the admin.
    await page.goto(`${t.base}/#/now`);
    await page.waitForSelector('#events-list .event[data-type="settings-changed"]');
    expect(await page.locator('#events-list .event[data-type="settings-changed"]').first().innerText()).toMatch(/Zones changed \(now 4: entrance, stacks, tables, quiet-corner\)[\s\S]*by the admin/);
    expect(errors).toEqual([]);
    await page.close();
  });

  it('places reference people with the keyboard alone: add, choose, move, resize, save', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/`);
    await signIn(page);
    await page.goto(`${t.base}/#/zones`);
    await page.waitForSelector('#zone-canvas[data-background="shown"]');
    await page.waitForSelector('#zone-list button[data-zone="tables"]');
    await page.locator('#zones-camera').focus();
    await tabTo(page, '#zone-list button[data-zone="tables"]');
    await page.keyboard.press('Enter');
    await tabTo(page, 'button[data-tool="refs"]', true);
    await page.keyboard.press('Enter');
    await tabTo(page, '#zone-canvas');
    // Box 1 in the middle row of the reading tables (0.54..0.98), moved 10 % up; box 2 moved 10 % down and made larger.
    await page.keyboard.press('n');
    for (let i = 0; i < 5; i++) await page.keyboard.press('Shift+ArrowUp');
    await page.keyboard.press('n');
    for (let i = 0; i < 5; i++) await page.keyboard.press('Shift+ArrowDown');
    await page.keyboard.press('+');
    expect(await page.textContent('#canvas-status')).toMatch(/^Reference person 2 of 2: feet 86\.0 % down, /);
    await page.keyboard.press('b');
    expect(await page.textContent('#canvas-status')).toMatch(/^Reference person 1 of 2: feet 66\.0 % down, /);
    expect(await page.locator('#refs-list li').count()).toBe(2);
    expect(await page.textContent('#refs-summary')).toMatch(/^Expected person: /);
    await tabTo(page, '#zones-save');
    await page.keyboard.press('Enter');
    await page.waitForSelector('#zones-ok:text-matches("^Saved")');
    const refs = t.service.store.getZone(CAMERA, 'tables')!.zone.perspective!;
    // check: worked by hand: the zone's middle row (0.54 + 0.98) / 2 = 0.76, five Shift steps of 2 % up and down
    expect(refs.map((r) => r.y)).toEqual([0.66, 0.86]);
    // The larger box nearer the camera: 1.1² = 1.21 times the first one's area (within the rounding to 4 decimals).
    expect(refs[1].area / refs[0].area).toBeCloseTo(1.21, 1);
    expect(errors).toEqual([]);
    await page.close();
  });

  it('the capacity helper sets its suggestion as a zone capacity, with the admin key', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/`);
    await signIn(page);
    await page.goto(`${t.base}/#/capacity`);
    await page.waitForSelector('#cap-use option[value="library-reading"]', { state: 'attached' });
    await page.selectOption('#cap-use', 'library-reading');
    await page.fill('#cap-area', '100');
    await page.selectOption('#cap-unit', 'm2');
    await page.click('#capacity-form button[type="submit"]');
    // check: 100 m² ÷ (50 ft² × 0.09290304 m²/ft²) = 21.53 → 22 (IBC 2021 Table 1004.5, recalled from memory)
    await page.waitForSelector('#cap-zone option[value="reading-room/stacks"]', { state: 'attached' });
    expect(await page.textContent('#cap-apply-button')).toBe('Set 22 as capacity');
    await page.selectOption('#cap-zone', 'reading-room/stacks');
    await page.click('#cap-apply-button');
    await page.waitForSelector('#cap-apply-ok:text-matches("now 22")');
    expect(await page.textContent('#cap-apply-ok')).toMatch(/authority posted or approved/);
    expect(t.service.store.getZone(CAMERA, 'stacks')!.zone.capacity).toBe(22);
    const live = await jsonOf(await fetch(`${t.base}/api/live`));
    expect(live.cameras.find((c: { camera: string }) => c.camera === CAMERA).zones.find((z: { id: string }) => z.id === 'stacks').capacity).toBe(22);
    expect(errors).toEqual([]);
    await page.close();
  });

  it('History stops at the current hour', async () => {
    const { page, errors } = await browser.newPage();
    await page.goto(`${t.base}/#/history`);
    await page.waitForSelector('#history-zone option[value="reading-room/tables"]', { state: 'attached' });
    await page.selectOption('#history-zone', 'reading-room/tables');
    await page.waitForSelector('#history-table tbody tr');
    // check: luxon (IANA tz database) for the local hour now
    const hour = DateTime.now().setZone(TEST_TIME_ZONE).startOf('hour').toFormat('HH:mm');
    const hours = await page.locator('#history-table tbody td.hour').allTextContents();
    expect(hours[hours.length - 1]).toBe(hour);
    expect(hours.every((h) => h <= hour)).toBe(true);
    expect(errors).toEqual([]);
    await page.close();
  });

  it('polls when the live stream is refused, and greys a camera whose last picture is over 20 s old', async () => {
    const { page, errors } = await browser.newPage();
    // The stream answers 503 with a message, as when its slots are full; the page must poll instead.
    let polls = 0;
    let stale = false;
    await page.route('**/api/live/stream', (route) => route.fulfill({ status: 503, contentType: 'application/json', body: JSON.stringify({ error: 'too many live streams open (32)' }) }));
    await page.route('**/api/live', async (route) => {
      polls++;
      const res = await route.fetch();
      const state = await res.json();
      if (stale) {
        // The camera as if it had stopped delivering 40 s ago while the service still answers.
        const c = state.cameras.find((q: { camera: string }) => q.camera === CAMERA);
        c.lastFrameAt = state.time - 40_000;
      }
      await route.fulfill({ response: res, json: state });
    });
    await page.goto(`${t.base}/`);
    await page.waitForSelector('#stream-state[data-state="polling"]');
    expect(await page.textContent('#stream-state')).toBe('Updating every 5 s');
    await page.waitForSelector(`.camera[data-camera="${CAMERA}"][data-current="true"] .zone`);
    const first = Number(await page.getAttribute(`.camera[data-camera="${CAMERA}"]`, 'data-frame-at'));
    // The figures move on through polling alone.
    for (let waited = 0; Number(await page.getAttribute(`.camera[data-camera="${CAMERA}"]`, 'data-frame-at')) <= first; waited += 250) {
      if (waited > 15_000) throw new Error('the page did not poll new figures within 15 s');
      await page.waitForTimeout(250);
    }
    expect(polls).toBeGreaterThanOrEqual(2);
    stale = true;
    const card = page.locator(`.camera[data-camera="${CAMERA}"][data-current="false"]`);
    await card.waitFor({ timeout: 20_000 });
    expect(await card.locator('.pill').textContent()).toBe('Waiting');
    expect(await card.locator('.why').textContent()).toMatch(/^No new picture for 4\d s: the figures are from \d{2}:\d{2}:\d{2} and may have changed/);
    expect(await card.locator('.zone').first().getAttribute('data-level')).toBe('old');
    await page.screenshot({ path: join(shots, 'now-camera-waiting.png'), fullPage: true });
    // The refused stream is the only error chromium reports.
    expect(errors.filter((e) => !/status of 503/.test(e))).toEqual([]);
    await page.close();
  });
});

describe('when the service stops', () => {
  it('a live stream gone quiet is checked against /api/health: no answer means not connected, until the service answers again', async () => {
    const { page, errors } = await browser.newPage();
    // The page's timers run on a clock the test turns: 9 s of silence pass at once, while the
    // stream itself stays open. The service's health check is made to fail, as on a dead network.
    await page.clock.install();
    await page.goto(`${t.base}/`);
    await page.waitForSelector('#stream-state[data-state="live"]');
    await page.waitForSelector(`.camera[data-camera="${CAMERA}"][data-current="true"] .zone`);
    expect(await page.isVisible('#connection')).toBe(false);
    await page.route('**/api/health', (route) => route.abort('connectionrefused'));
    await page.route('**/api/live', (route) => route.abort('connectionrefused'));
    await page.route('**/api/live/stream', (route) => route.abort('connectionrefused'));
    await page.clock.runFor(9_000);
    await page.waitForSelector('#connection:not([hidden])', { timeout: 10_000 });
    expect(await page.textContent('#connection')).toMatch(/^No answer from the Residuum service since \d{2}:\d{2}:\d{2}/);
    expect(await page.getAttribute(`.camera[data-camera="${CAMERA}"]`, 'data-current')).toBe('false');
    // The network is back: the next poll finds the service, the stream opens again, the banner goes.
    await page.unrouteAll();
    await page.clock.runFor(6_000);
    await page.waitForSelector('#stream-state[data-state="live"]', { timeout: 10_000 });
    await page.waitForSelector('#connection', { state: 'hidden' });
    await page.waitForSelector(`.camera[data-camera="${CAMERA}"][data-current="true"]`);
    expect(errors.filter((e) => !/ERR_CONNECTION_REFUSED|Failed to fetch|net::/.test(e))).toEqual([]);
    await page.close();
  });

  it('every view says so within 20 s: greyed figures, last seen, reconnecting', async () => {
    const own = await startTestService({ speed: 10 });
    const { page, errors } = await browser.newPage();
    try {
      await page.setViewportSize({ width: 390, height: 844 });
      await page.goto(`${own.base}/`);
      await page.waitForSelector(`.camera[data-camera="${CAMERA}"][data-current="true"] .zone`);
      await page.waitForSelector('#stream-state[data-state="live"]');
      await own.stop();
      const stoppedAt = Date.now();
      // The page's own clock bounds the wait: the banner must be there within 20 s of the stop.
      await page.waitForSelector('#connection:not([hidden])', { timeout: 20_000 });
      const took = Date.now() - stoppedAt;
      expect(await page.textContent('#connection')).toMatch(/^No answer from the Residuum service since \d{2}:\d{2}:\d{2} \(\d+ s ago\)\. The figures shown are from then, greyed out, not live\. Reconnecting…$/);
      expect(await page.textContent('#stream-state')).toBe('Not connected: reconnecting…');
      const card = page.locator(`.camera[data-camera="${CAMERA}"]`);
      expect(await card.getAttribute('data-current')).toBe('false');
      expect(await card.locator('.pill').textContent()).toBe('Last seen');
      expect(await page.textContent('#now-updated')).toMatch(/^· last seen \d{2}:\d{2}:\d{2}$/);
      console.log(`page said the service stopped after ${took} ms`);
      await page.screenshot({ path: join(shots, 'now-service-stopped-phone.png'), fullPage: true });
      // The banner stays on the other views, and History says it cannot load.
      await page.click('.tabs a[data-view="history"]');
      await page.waitForSelector('#history-error:not(:empty)');
      expect(await page.isVisible('#connection')).toBe(true);
      expect(await page.textContent('#history-error')).toMatch(/^The Residuum service is not answering/);
      await page.screenshot({ path: join(shots, 'history-service-stopped-phone.png'), fullPage: true });
    } finally {
      await page.close();
      await own.stop().catch(() => {});
    }
    expect(errors.filter((e) => !/ERR_CONNECTION_REFUSED|Failed to fetch|net::/.test(e))).toEqual([]);
  });
});
