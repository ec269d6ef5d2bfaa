/**
 * Count accuracy on our synthetic scenes, as a new user would get it: the empty scene learned from
 * the busy frames themselves (robust learning, the default), no person size given, the frames
 * counted in order by `evaluate` (the subspace method and the MOG2 baseline through the same
 * blob stages). Prints MAE, exact share and bias per scene and method; `--json` one JSON object.
 *
 *   npm run accuracy [-- --scene plaza] [-- --frames 1200] [-- --calibrate 10] [-- --json]
 *   npm run accuracy -- --scene plaza --options '{"groupShare":0,"standSeconds":0,"shadows":false}'
 *
 * --calibrate N gives evaluate the true counts of N frames spread over the sequence as calibration
 * (a user saying "there are N people here now" N times); those frames are not scored.
 */
import { parseArgs } from 'node:util';
import { evaluate } from '../src/commands/evaluate.ts';
import { findPersonSize } from '../src/counting/findPersonSize.ts';
import { describeCalibration } from '../src/counting/calibratedTally.ts';
import type { Zone } from '../src/domain/zone.ts';
import { createScene, sceneIds, syntheticFrames, type SceneId } from '../src/frames/synthetic/index.ts';
import { fitSubspace } from '../src/vision/fitSubspace.ts';

const { values } = parseArgs({
  options: {
    scene: { type: 'string', multiple: true },
    frames: { type: 'string', default: '3000' },
    learn: { type: 'string', default: '500' },
    calibrate: { type: 'string', default: '0' },
    // Scene options as JSON (e.g. the plaza's groupShare, standSeconds, shadows), to switch difficulties off one by one.
    options: { type: 'string', default: '{}' },

    json: { type: 'boolean', default: false },
    each: { type: 'boolean', default: false },
    plain: { type: 'boolean', default: false },
  },
});
const frames = Number(values.frames);
const learnFrames = Number(values.learn);

const sceneOptions = JSON.parse(values.options!) as Record<string, unknown>;
if (typeof sceneOptions !== 'object' || sceneOptions === null || Array.isArray(sceneOptions)) throw new RangeError(`--options must be a JSON object, got ${values.options}`);
const scenes = (values.scene ?? sceneIds.filter((id) => id !== 'stock-room')) as SceneId[];
const results: Record<string, unknown> = {};

for (const id of scenes) {
  const scene = createScene(id, sceneOptions);
  // No person size given: the counter must find it.
  const zones: Zone[] = scene.zones.map(({ personArea, minBlobArea, ...zone }) => (zone.kind === 'room' ? zone : { ...zone, personArea, minBlobArea }));
  // Spread over the frames counted, as residuum learn samples a recording.
  const learning = Array.from({ length: learnFrames }, (_, i) => scene.frameAt(Math.floor((i * frames) / learnFrames)).frame.data);
  const started = performance.now();
  const model = fitSubspace(learning, scene, { robustIterations: values.plain ? 0 : 2 });
  const learnMs = performance.now() - started;
  const counts = new Map<string, Record<string, number>>();
  for (let t = 0; t < frames; t++) {
    const { truth } = scene.frameAt(t);
    counts.set(String(t), Object.fromEntries(Object.entries(truth).map(([zone, z]) => [zone, z.count])));
  }
  const found = await findPersonSize(model, zones, syntheticFrames(scene, { count: frames }));
  // --calibrate N: the true counts of N frames spread over the sequence, as a user would give them.
  const calibrateFrames = Number(values.calibrate);
  const calibration = calibrateFrames > 0 ? new Map(Array.from({ length: calibrateFrames }, (_, i) => String(Math.floor(((i + 0.5) * frames) / calibrateFrames))).map((t) => [t, counts.get(t)!])) : undefined;
  const reports = await evaluate(model, syntheticFrames(scene, { count: frames }), found.zones, ['subspace', 'mog2'], { counts }, { sequence: !values.each, framesPerSecond: scene.frameRate, ...(calibration && { calibration }) });
  let people = 0;
  for (const c of counts.values()) for (const [zone, n] of Object.entries(c)) if (zones.find((z) => z.id === zone)?.kind === 'room') people += n;
  results[id] = {
    meanPeople: people / frames,
    learnMs: Math.round(learnMs),
    rejectedShare: model.rejectedShare,
    personSize: found.suggestion.state === 'ready' ? { intercept: found.suggestion.intercept, slope: found.suggestion.slope, rows: found.suggestion.rows } : found.suggestion.message,
    methods: Object.fromEntries(reports.map((r) => [r.method, { zones: r.zones, worst: r.worst.slice(0, 3).map((w) => `${w.frame}: ${JSON.stringify(w.zones)}`) }])),
  };
  if (!values.json) {
    console.log(`\n${id}: ${frames} frames, ${(people / frames).toFixed(2)} people per frame in rooms; learned from ${learnFrames} busy frames (${(model.rejectedShare * 100).toFixed(1)} % set aside)`);
    console.log(`  person size: ${typeof (results[id] as { personSize: unknown }).personSize === 'string' ? found.suggestion.message : `√area = ${found.suggestion.intercept!.toFixed(4)} + ${found.suggestion.slope!.toFixed(4)}·y over rows ${found.suggestion.rows!.map((r) => r.toFixed(2)).join('–')}`}`);
    for (const r of reports) {
      const cells = Object.entries(r.zones).map(([zone, s]) => `${zone} MAE ${s.mae.toFixed(3)} exact ${(s.exact * 100).toFixed(0)}% bias ${s.bias.toFixed(2)}`);
      console.log(`  ${r.method.padEnd(9)} ${cells.join(' | ')}`);
      for (const [zone, fit] of Object.entries(r.calibration ?? {})) console.log(`    ${describeCalibration(zone, fit)}`);
    }
  }
}
if (values.json) console.log(JSON.stringify(results));
