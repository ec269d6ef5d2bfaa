// `npm run build:kernels`: writes src/vision/kernels/gram.wasm, the WebAssembly SIMD kernel of
// the learning Gram matrix, from the WebAssembly text generated below (assembled by wabt, the
// WebAssembly Binary Toolkit). The .wasm is committed so that running needs no build step; a test
// rebuilds it and checks that it matches.
import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import wabtInit from 'wabt';

/** Frames per block side: a block is BLOCK × BLOCK dot products sharing each loaded pixel vector. */
export const BLOCK = 4;

/**
 * The text of the kernel module. Exported function:
 *
 * gram(frames, n, d, tile, out): frames are n × d Float32 values (frame-major, d a multiple of 4,
 * n a multiple of BLOCK) at byte address `frames`; out is n × n Float64 at byte address `out`,
 * zeroed by the caller. For every block of BLOCK frames a and BLOCK frames b ≤ a (block-wise) it
 * adds Σ_p x[a, p] · x[b, p] into out[a · n + b], the products summed in four f32 lanes over `tile`
 * pixels at a time (tile a multiple of 4) and the lane sums added in f64.
 */
export function gramText(): string {
  const r = [...Array(BLOCK).keys()];
  const pairs = r.flatMap((i) => r.map((j) => [i, j] as const));
  const locals = [
    ...pairs.map(([i, j]) => `(local $s${i}${j} v128)`),
    ...r.map((i) => `(local $u${i} v128)`),
    ...r.map((j) => `(local $v${j} v128)`),
    ...r.map((i) => `(local $pa${i} i32)`),
    ...r.map((j) => `(local $pb${j} i32)`),
  ].join(' ');
  const lane = (s: string) =>
    `(f64.add (f64.add (f64.promote_f32 (f32x4.extract_lane 0 (local.get ${s}))) (f64.promote_f32 (f32x4.extract_lane 1 (local.get ${s})))) ` +
    `(f64.add (f64.promote_f32 (f32x4.extract_lane 2 (local.get ${s}))) (f64.promote_f32 (f32x4.extract_lane 3 (local.get ${s})))))`;
  const cell = (i: number, j: number) =>
    `(local.set $q (i32.add (local.get $out) (i32.shl (i32.add (i32.mul (i32.add (local.get $a) (i32.const ${i})) (local.get $n)) (i32.add (local.get $b) (i32.const ${j}))) (i32.const 3))))\n` +
    `(f64.store (local.get $q) (f64.add (f64.load (local.get $q)) ${lane(`$s${i}${j}`)}))`;
  return `(module
  (memory (import "env" "memory") 1)
  (func (export "gram") (param $frames i32) (param $n i32) (param $d i32) (param $tile i32) (param $out i32)
    (local $stride i32) (local $p0 i32) (local $p1 i32) (local $a i32) (local $b i32) (local $p i32) (local $q i32)
    ${locals}
    (local.set $stride (i32.shl (local.get $d) (i32.const 2)))
    (local.set $p0 (i32.const 0))
    (block $tiles_done (loop $tiles
      (br_if $tiles_done (i32.ge_u (local.get $p0) (local.get $d)))
      (local.set $p1 (select (local.get $d) (i32.add (local.get $p0) (local.get $tile))
        (i32.lt_u (local.get $d) (i32.add (local.get $p0) (local.get $tile)))))
      (local.set $a (i32.const 0))
      (block $rows_done (loop $rows
        (br_if $rows_done (i32.ge_u (local.get $a) (local.get $n)))
        ${r.map((i) => `(local.set $pa${i} (i32.add (local.get $frames) (i32.mul (i32.add (local.get $a) (i32.const ${i})) (local.get $stride))))`).join('\n        ')}
        (local.set $b (i32.const 0))
        (block $cols_done (loop $cols
          (br_if $cols_done (i32.gt_u (local.get $b) (local.get $a)))
          ${r.map((j) => `(local.set $pb${j} (i32.add (local.get $frames) (i32.mul (i32.add (local.get $b) (i32.const ${j})) (local.get $stride))))`).join('\n          ')}
          ${pairs.map(([i, j]) => `(local.set $s${i}${j} (v128.const i32x4 0 0 0 0))`).join(' ')}
          (local.set $p (i32.shl (local.get $p0) (i32.const 2)))
          (block $pixels_done (loop $pixels
            (br_if $pixels_done (i32.ge_u (local.get $p) (i32.shl (local.get $p1) (i32.const 2))))
            ${r.map((i) => `(local.set $u${i} (v128.load (i32.add (local.get $pa${i}) (local.get $p))))`).join('\n            ')}
            ${r.map((j) => `(local.set $v${j} (v128.load (i32.add (local.get $pb${j}) (local.get $p))))`).join('\n            ')}
            ${pairs.map(([i, j]) => `(local.set $s${i}${j} (f32x4.add (local.get $s${i}${j}) (f32x4.mul (local.get $u${i}) (local.get $v${j}))))`).join('\n            ')}
            (local.set $p (i32.add (local.get $p) (i32.const 16)))
            (br $pixels)))
          ${pairs.map(([i, j]) => cell(i, j)).join('\n          ')}
          (local.set $b (i32.add (local.get $b) (i32.const ${BLOCK})))
          (br $cols)))
        (local.set $a (i32.add (local.get $a) (i32.const ${BLOCK})))
        (br $rows)))
      (local.set $p0 (i32.add (local.get $p0) (local.get $tile)))
      (br $tiles)))))
`;
}

/** The assembled module. */
export async function buildGramWasm(): Promise<Uint8Array> {
  const wabt = await wabtInit();
  const module = wabt.parseWat('gram.wat', gramText(), { simd: true });
  try {
    module.validate();
    return new Uint8Array(module.toBinary({}).buffer);
  } finally {
    module.destroy();
  }
}

if (process.argv[1] === fileURLToPath(import.meta.url)) {
  const target = fileURLToPath(new URL('../src/vision/kernels/gram.wasm', import.meta.url));
  writeFileSync(target, await buildGramWasm());
  process.stdout.write(`wrote ${target}\n`);
}
