import { createServer, type Server } from 'node:http';
import { mkdtempSync, rmSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startService, type RunningService } from '../../../src/commands/run.ts';
import { validateConfig } from '../../../src/config/loadConfig.ts';
import { saveModel } from '../../../src/counting/modelFile.ts';
import { decodeLiveFrame } from '../../../src/frames/live/decodeLiveFrame.ts';
import { createScene } from '../../../src/frames/synthetic/index.ts';
import type { AlertMessage } from '../../../src/outputs/alerts/alertMessage.ts';
import { fitSubspace } from '../../../src/vision/fitSubspace.ts';
import { waitUntil } from '../../service/waitUntil.ts';
import { startSmtpServer, startWebhookReceiver, type ReceivedMail, type WebhookReceiver } from './receivers.ts';

// The real service (`startService`) with one snapshot camera served by a local HTTP server: the
// empty synthetic reading room (our invented scene) as JPEGs, or the same with a dark box where
// a person would stand, or HTTP 500 for a camera that fails. Alerts go to a local webhook receiver
// and a local SMTP server. The doorway's capacity is 0, so the box is over capacity.

const WIDTH = 80;
const HEIGHT = 60;
const QUIET_SECONDS = 10;
const root = mkdtempSync(join(tmpdir(), 'residuum-service-alerts-'));
let empty: Buffer[] = [];
let person: Buffer;
let mode: 'empty' | 'person' | 'error' = 'empty';
let polls = 0;
let camera: Server;
let hook: WebhookReceiver;
let smtp: Awaited<ReturnType<typeof startSmtpServer>>;
let service: RunningService;

async function jpeg(data: Uint8Array): Promise<Buffer> {
  return sharp(Buffer.from(data), { raw: { width: WIDTH, height: HEIGHT, channels: 1 } }).jpeg({ quality: 95 }).toBuffer();
}

beforeAll(async () => {
  const scene = createScene('reading-room', { width: WIDTH, height: HEIGHT });
  const frames = Array.from({ length: 30 }, (_, i) => Uint8Array.from(scene.emptyFrameAt(i * 100).data, (v) => Math.max(0, Math.min(255, Math.round(v)))));
  empty = await Promise.all(frames.map(jpeg));
  const box = Uint8Array.from(frames[0]);
  for (let y = 20; y < 52; y++) for (let x = 30; x < 46; x++) box[y * WIDTH + x] = 15;
  person = await jpeg(box);
  // The model is learned from the very frames the camera will send when the room is empty.
  const decoded = await Promise.all(empty.map((b) => decodeLiveFrame(b, { width: WIDTH, height: HEIGHT })));
  const model = fitSubspace(decoded.map((d) => d.frame.data), { width: WIDTH, height: HEIGHT }, { components: 4 });
  await saveModel(join(root, 'door.rsdm'), model, { source: 'test' });

  camera = createServer((_req, res) => {
    polls++;
    if (mode === 'error') return void res.writeHead(500, { 'content-type': 'text/plain' }).end('camera fault');
    res.writeHead(200, { 'content-type': 'image/jpeg' }).end(mode === 'person' ? person : empty[polls % empty.length]);
  });
  await new Promise<void>((done) => camera.listen(0, '127.0.0.1', done));
  hook = await startWebhookReceiver();
  smtp = await startSmtpServer();
  const config = validateConfig(
    {
      site: { name: 'Alert test site', timeZone: 'UTC' },
      server: { host: '127.0.0.1', port: 0 },
      cameras: [
        {
          id: 'door',
          name: 'Side door',
          source: { kind: 'snapshot', url: `http://127.0.0.1:${(camera.address() as AddressInfo).port}/snap.jpg`, intervalMs: 100, timeoutMs: 2000 },
          size: [WIDTH, HEIGHT],
          model: join(root, 'door.rsdm'),
          sampleSeconds: 1,
          adaptToDrift: false,
          smoothing: { window: 3, method: 'median' },
          zones: [{ id: 'way', name: 'Doorway', kind: 'room', capacity: 0, polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] }],
        },
      ],
      alerts: {
        quietSeconds: QUIET_SECONDS,
        webhooks: [{ url: hook.url, secret: 'test-secret' }],
        email: { smtp: { host: '127.0.0.1', port: smtp.port, security: 'none' }, from: 'alerts@example.org', to: ['facilities@example.org'] },
      },
    },
    join(root, 'residuum.yaml'),
  );
  service = await startService(config, { dataDir: join(root, 'data'), port: 0, alerts: { checkMs: 200, retryBackoff: { initialMs: 50, maxMs: 200 } } });
}, 120_000);

afterAll(async () => {
  await service?.stop();
  await hook?.close();
  await smtp?.close();
  await new Promise<void>((done) => (camera ? camera.close(() => done()) : done()));
  rmSync(root, { recursive: true, force: true });
});

const messages = () => hook.received.map((r) => JSON.parse(r.body) as AlertMessage);
const kinds = (list: { rule: string; phase: string }[]) => list.map((m) => `${m.rule} ${m.phase}`);
const mailKinds = (mails: ReceivedMail[]) => mails.map((m) => String(/^X-Residuum-Alert: (.*)$/m.exec(m.raw)?.[1]).replace('; ', ' ').trim());
const status = () => service.cameras.get('door')!.live();
const pause = (ms: number) => new Promise((done) => setTimeout(done, ms));

describe('alerts from the running service', () => {
  it('sends one message per event to the webhook and by e-mail: a zone over capacity, a camera offline and back', async () => {
    await waitUntil(() => status().state === 'online' && status().zones[0].count === 0 && status().lastFrameAt, { what: 'the door camera counting the empty doorway', timeoutMs: 60_000 });
    expect(hook.received).toHaveLength(0);

    // Someone in the doorway, then not, then again, … each for a second: shorter than the quiet period.
    let flips = 0;
    for (let i = 0; i < 4; i++) {
      mode = i % 2 === 0 ? 'person' : 'empty';
      const want = mode === 'person';
      await waitUntil(() => (status().zones[0].count >= 1) === want, { what: `the doorway ${want ? 'occupied' : 'empty'}`, timeoutMs: 20_000, intervalMs: 50 });
      flips++;
      await pause(1000);
    }
    expect(flips).toBe(4);
    await waitUntil(() => hook.received.length >= 1 && smtp.mails.length >= 1, { what: 'the over-capacity alert', timeoutMs: 20_000 });
    await pause(1500);
    expect(kinds(messages())).toEqual(['over-capacity started']);
    expect(mailKinds(smtp.mails)).toEqual(['over-capacity started']);
    expect(messages()[0]).toMatchObject({ site: 'Alert test site', camera: 'door', cameraName: 'Side door', zone: 'way', zoneName: 'Doorway', figures: { capacity: 0 } });
    expect(smtp.mails[0].subject).toMatch(/^Doorway \(Side door\): \d+ (person|people), more than its capacity of 0\.$/);

    // The camera fails: offline, one message.
    mode = 'error';
    await waitUntil(() => kinds(messages()).includes('camera-offline started'), { what: 'the camera-offline alert', timeoutMs: 30_000 });
    expect(messages().find((m) => m.rule === 'camera-offline')!.figures.reason).toMatch(/HTTP 500/);

    // It comes back with the doorway empty: after the quiet period both events end, once each.
    mode = 'empty';
    await waitUntil(() => messages().length >= 4 && smtp.mails.length >= 4, { what: 'both ends', timeoutMs: 60_000 });
    await pause(1500);
    const expected = ['camera-offline ended', 'camera-offline started', 'over-capacity ended', 'over-capacity started'];
    expect(kinds(messages()).sort()).toEqual(expected);
    expect(mailKinds(smtp.mails).sort()).toEqual(expected);
    const back = messages().find((m) => m.rule === 'camera-offline' && m.phase === 'ended')!;
    expect(back.text).toMatch(/^Camera Side door is back online and counting after \d+ s offline\.$/);

    // Each delivery is an event of the camera.
    const sent = service.store.listEvents({ camera: 'door', type: 'alert-sent' });
    expect(sent).toHaveLength(8);
    expect(service.store.listEvents({ camera: 'door', type: 'alert-failed' })).toHaveLength(0);
  }, 180_000);
});
