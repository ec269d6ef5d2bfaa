// `npm run build:kernels`: writes src/vision/kernels/learning.wasm, the WebAssembly SIMD kernels
// of learning (centring, Gram matrix, eigen-images, residual squares), from the WebAssembly text
// generated below, and src/vision/kernels/counting.wasm, those of counting a frame (text in
// scripts/countingKernelText.ts); both assembled by wabt, the WebAssembly Binary Toolkit. The
// .wasm files are committed so that running needs no build step; tests rebuild them and check
// that they match.
import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import wabtInit from 'wabt';
import { countingKernelText } from './countingKernelText.ts';

/**
 * Frames are padded to a multiple of BLOCK; a Gram block is GRAM_ROWS × BLOCK dot products
 * sharing each loaded pixel vector, `project` blocks are BLOCK × BLOCK, and `combine`, `project`
 * and `residual` take components (weight rows) BLOCK at a time.
 */
export const BLOCK = 4;
/**
 * Frames per row of a Gram block: 2 × 4 blocks keep their 8 accumulators and 6 loaded vectors in
 * the 16 SIMD registers of x86-64, and ran some 20% faster than 4 × 4 blocks (which spill).
 */
const GRAM_ROWS = 2;
/** Frames per `project` block (× BLOCK components): 8 accumulators stay in registers, as in gram. */
const PROJECT_ROWS = 2;

const zero = '(v128.const i32x4 0 0 0 0)';
/** Lanes 2 and 3 of an f32x4 moved to lanes 0 and 1. */
const high = (v: string) => `(i8x16.shuffle 8 9 10 11 12 13 14 15 8 9 10 11 12 13 14 15 ${v} ${v})`;
/** `(local.set $x (i32.add (local.get $x) step))`. */
const bump = (x: string, step: string) => `(local.set $${x} (i32.add (local.get $${x}) ${step}))`;
/** A loop named `name` that runs `body` while `exit` is false. */
const loop = (name: string, exit: string, body: string[]) =>
  `(block $${name}_done (loop $${name}\n(br_if $${name}_done ${exit})\n${body.join('\n')}\n(br $${name})))`;
/** Adds the four f32 lanes of `v` into the two f64x2 at byte address `at`. */
const addWide = (at: string, v: string) =>
  `(v128.store ${at} (f64x2.add (v128.load ${at}) (f64x2.promote_low_f32x4 ${v})))\n` +
  `(v128.store offset=16 ${at} (f64x2.add (v128.load offset=16 ${at}) (f64x2.promote_low_f32x4 ${high(v)})))`;

/**
 * centre(frames, n, d, sums, mean): frames are n × d Float32 values (frame-major, d a multiple of
 * 4) at byte address `frames`; `sums` is d Float64 of scratch. Writes their per-pixel mean, summed
 * in f64 in frame order and rounded once to f32, to `mean` (d values), and subtracts it from
 * every frame in place (f32 subtraction): the same operations, in the same order, as the JS
 * loops of fitSubspace. Each pass runs over the frames in memory order.
 */
function centreText(): string {
  const get = (x: string) => `(local.get $${x})`;
  const sumAt = `(i32.add ${get('sums')} (i32.shl ${get('p')} (i32.const 1)))`;
  return `(func (export "centre") (param $frames i32) (param $n i32) (param $d i32) (param $sums i32) (param $mean i32)
  (local $stride i32) (local $p i32) (local $a i32) (local $t i32) (local $x i32) (local $count v128)
  (local.set $stride (i32.shl ${get('d')} (i32.const 2)))
  (local.set $count (f64x2.splat (f64.convert_i32_u ${get('n')})))
  (local.set $p (i32.const 0))
  ${loop('clear', `(i32.ge_u ${get('p')} ${get('stride')})`, [
    `(v128.store ${sumAt} ${zero}) (v128.store offset=16 ${sumAt} ${zero})`,
    bump('p', '(i32.const 16)'),
  ])}
  (local.set $a ${get('frames')}) (local.set $t (i32.const 0))
  ${loop('sum', `(i32.ge_u ${get('t')} ${get('n')})`, [
    '(local.set $p (i32.const 0))',
    loop('sum_pixels', `(i32.ge_u ${get('p')} ${get('stride')})`, [
      addWide(sumAt, `(v128.load (i32.add ${get('a')} ${get('p')}))`),
      bump('p', '(i32.const 16)'),
    ]),
    bump('a', get('stride')),
    bump('t', '(i32.const 1)'),
  ])}
  (local.set $p (i32.const 0))
  ${loop('divide', `(i32.ge_u ${get('p')} ${get('stride')})`, [
    `(v128.store (i32.add ${get('mean')} ${get('p')}) (i8x16.shuffle 0 1 2 3 4 5 6 7 16 17 18 19 20 21 22 23
      (f32x4.demote_f64x2_zero (f64x2.div (v128.load ${sumAt}) ${get('count')}))
      (f32x4.demote_f64x2_zero (f64x2.div (v128.load offset=16 ${sumAt}) ${get('count')}))))`,
    bump('p', '(i32.const 16)'),
  ])}
  (local.set $a ${get('frames')}) (local.set $t (i32.const 0))
  ${loop('subtract', `(i32.ge_u ${get('t')} ${get('n')})`, [
    '(local.set $p (i32.const 0))',
    loop('subtract_pixels', `(i32.ge_u ${get('p')} ${get('stride')})`, [
      `(local.set $x (i32.add ${get('a')} ${get('p')}))`,
      `(v128.store ${get('x')} (f32x4.sub (v128.load ${get('x')}) (v128.load (i32.add ${get('mean')} ${get('p')}))))`,
      bump('p', '(i32.const 16)'),
    ]),
    bump('a', get('stride')),
    bump('t', '(i32.const 1)'),
  ])})`;
}

/**
 * gram(frames, n, d, tile, out): frames are n × d Float32 values (frame-major, d a multiple of 4,
 * n a multiple of BLOCK) at byte address `frames`; out is n × n Float64 at byte address `out`,
 * zeroed by the caller. For every block of GRAM_ROWS frames a and BLOCK frames b whose first
 * frame is ≤ the last a, it adds Σ_p x[a, p] · x[b, p] into out[a · n + b] (so every entry with
 * b ≤ a, and some above the diagonal), the products summed in four f32 lanes over `tile` pixels
 * at a time (tile a multiple of 4) and the lane sums added in f64.
 */
function gramText(): string {
  const ri = [...Array(GRAM_ROWS).keys()];
  const cj = [...Array(BLOCK).keys()];
  const pairs = ri.flatMap((i) => cj.map((j) => [i, j] as const));
  const locals = [
    ...pairs.map(([i, j]) => `(local $s${i}${j} v128)`),
    ...ri.map((i) => `(local $u${i} v128)`),
    ...cj.map((j) => `(local $v${j} v128)`),
    ...ri.map((i) => `(local $pa${i} i32)`),
    ...cj.map((j) => `(local $pb${j} i32)`),
  ].join(' ');
  const lane = (s: string) =>
    `(f64.add (f64.add (f64.promote_f32 (f32x4.extract_lane 0 (local.get ${s}))) (f64.promote_f32 (f32x4.extract_lane 1 (local.get ${s})))) ` +
    `(f64.add (f64.promote_f32 (f32x4.extract_lane 2 (local.get ${s}))) (f64.promote_f32 (f32x4.extract_lane 3 (local.get ${s})))))`;
  const cell = (i: number, j: number) =>
    `(local.set $q (i32.add (local.get $out) (i32.shl (i32.add (i32.mul (i32.add (local.get $a) (i32.const ${i})) (local.get $n)) (i32.add (local.get $b) (i32.const ${j}))) (i32.const 3))))\n` +
    `(f64.store (local.get $q) (f64.add (f64.load (local.get $q)) ${lane(`$s${i}${j}`)}))`;
  return `(func (export "gram") (param $frames i32) (param $n i32) (param $d i32) (param $tile i32) (param $out i32)
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
        ${ri.map((i) => `(local.set $pa${i} (i32.add (local.get $frames) (i32.mul (i32.add (local.get $a) (i32.const ${i})) (local.get $stride))))`).join('\n        ')}
        (local.set $b (i32.const 0))
        (block $cols_done (loop $cols
          (br_if $cols_done (i32.gt_u (local.get $b) (i32.add (local.get $a) (i32.const ${GRAM_ROWS - 1}))))
          ${cj.map((j) => `(local.set $pb${j} (i32.add (local.get $frames) (i32.mul (i32.add (local.get $b) (i32.const ${j})) (local.get $stride))))`).join('\n          ')}
          ${pairs.map(([i, j]) => `(local.set $s${i}${j} (v128.const i32x4 0 0 0 0))`).join(' ')}
          (local.set $p (i32.shl (local.get $p0) (i32.const 2)))
          (block $pixels_done (loop $pixels
            (br_if $pixels_done (i32.ge_u (local.get $p) (i32.shl (local.get $p1) (i32.const 2))))
            ${ri.map((i) => `(local.set $u${i} (v128.load (i32.add (local.get $pa${i}) (local.get $p))))`).join('\n            ')}
            ${cj.map((j) => `(local.set $v${j} (v128.load (i32.add (local.get $pb${j}) (local.get $p))))`).join('\n            ')}
            ${pairs.map(([i, j]) => `(local.set $s${i}${j} (f32x4.add (local.get $s${i}${j}) (f32x4.mul (local.get $u${i}) (local.get $v${j}))))`).join('\n            ')}
            (local.set $p (i32.add (local.get $p) (i32.const 16)))
            (br $pixels)))
          ${pairs.map(([i, j]) => cell(i, j)).join('\n          ')}
          (local.set $b (i32.add (local.get $b) (i32.const ${BLOCK})))
          (br $cols)))
        (local.set $a (i32.add (local.get $a) (i32.const ${GRAM_ROWS})))
        (br $rows)))
      (local.set $p0 (i32.add (local.get $p0) (local.get $tile)))
      (br $tiles))))`;
}

/**
 * combine(rows, m, weights, k, d, tile, out): weighted sums of m frames. `rows` holds m i32 byte
 * addresses of the frames (d Float32 values each, d a multiple of 8); `weights` is m × k Float32,
 * frame-major (the k weights of frame t at weights[t · k ..]), k a multiple of BLOCK; out is k × d
 * Float64, component-major, zeroed by the caller. Adds Σ_t weights[t, j] · frame_t[i] into
 * out[j · d + i]: blocks of eight pixels (two vectors) × BLOCK components, whose 8 accumulators
 * stay in registers while each loaded weight serves two products and each loaded pixel vector
 * four; the products summed in f32 lanes over `tile` frames at a time and the tile sums added in
 * f64.
 */
function combineText(): string {
  const get = (x: string) => `(local.get $${x})`;
  const q = [...Array(BLOCK).keys()];
  const h = [0, 1];
  return `(func (export "combine") (param $rows i32) (param $m i32) (param $weights i32) (param $k i32) (param $d i32) (param $tile i32) (param $out i32)
  (local $end i32) (local $p i32) (local $g i32) (local $t0 i32) (local $t1 i32) (local $t i32) (local $w i32) (local $o i32) (local $a i32) (local $x v128)
  ${h.map((v) => `(local $v${v} v128)`).join(' ')}
  ${h.flatMap((v) => q.map((j) => `(local $s${v}${j} v128)`)).join(' ')}
  (local.set $end (i32.shl ${get('d')} (i32.const 2)))
  (local.set $p (i32.const 0))
  ${loop('chunks', `(i32.ge_u ${get('p')} ${get('end')})`, [
    '(local.set $g (i32.const 0))',
    loop('groups', `(i32.ge_u ${get('g')} ${get('k')})`, [
      '(local.set $t0 (i32.const 0))',
      loop('tiles', `(i32.ge_u ${get('t0')} ${get('m')})`, [
        `(local.set $t1 (select ${get('m')} (i32.add ${get('t0')} ${get('tile')}) (i32.lt_u ${get('m')} (i32.add ${get('t0')} ${get('tile')}))))`,
        h.flatMap((v) => q.map((j) => `(local.set $s${v}${j} ${zero})`)).join(' '),
        `(local.set $t ${get('t0')})`,
        loop('frames', `(i32.ge_u ${get('t')} ${get('t1')})`, [
          `(local.set $a (i32.add (i32.load (i32.add ${get('rows')} (i32.shl ${get('t')} (i32.const 2)))) ${get('p')}))`,
          `(local.set $v0 (v128.load ${get('a')}))`,
          `(local.set $v1 (v128.load offset=16 ${get('a')}))`,
          `(local.set $w (i32.add ${get('weights')} (i32.shl (i32.add (i32.mul ${get('t')} ${get('k')}) ${get('g')}) (i32.const 2))))`,
          ...q.map(
            (j) =>
              `(local.set $x (v128.load32_splat offset=${4 * j} ${get('w')}))\n` +
              h.map((v) => `(local.set $s${v}${j} (f32x4.add ${get(`s${v}${j}`)} (f32x4.mul ${get(`v${v}`)} ${get('x')})))`).join('\n'),
          ),
          bump('t', '(i32.const 1)'),
        ]),
        ...q.flatMap((j) =>
          h.map(
            (v) =>
              `(local.set $o (i32.add ${get('out')} (i32.add (i32.shl (i32.mul (i32.add ${get('g')} (i32.const ${j})) ${get('d')}) (i32.const 3)) (i32.add (i32.shl ${get('p')} (i32.const 1)) (i32.const ${32 * v})))))\n` +
              addWide(get('o'), get(`s${v}${j}`)),
          ),
        ),
        `(local.set $t0 ${get('t1')})`,
      ]),
      bump('g', `(i32.const ${BLOCK})`),
    ]),
    bump('p', '(i32.const 32)'),
  ])})`;
}

/**
 * project(rows, m, offset, basis, k, d, tile, out): coefficients of m frames in k basis rows.
 * `rows` holds m i32 byte addresses of the frames (d Float32 values each, d a multiple of 4,
 * m a multiple of BLOCK); `offset` is d Float32; `basis` is k × d Float32, component-major,
 * k a multiple of BLOCK; out is m × k Float64, frame-major, zeroed by the caller. Adds
 * Σ_i (frame_t[i] − offset[i]) · basis[j, i] into out[t · k + j], in blocks of PROJECT_ROWS frames ×
 * BLOCK components, the products summed in f32 lanes over `tile` pixels at a time and the lane
 * sums added in f64 (as in gram).
 */
function projectText(): string {
  const get = (x: string) => `(local.get $${x})`;
  const r = [...Array(PROJECT_ROWS).keys()];
  const c4 = [...Array(BLOCK).keys()];
  const pairs = r.flatMap((i) => c4.map((j) => [i, j] as const));
  const lane = (s: string) =>
    `(f64.add (f64.add (f64.promote_f32 (f32x4.extract_lane 0 ${get(s)})) (f64.promote_f32 (f32x4.extract_lane 1 ${get(s)}))) ` +
    `(f64.add (f64.promote_f32 (f32x4.extract_lane 2 ${get(s)})) (f64.promote_f32 (f32x4.extract_lane 3 ${get(s)}))))`;
  const cell = (i: number, j: number) =>
    `(local.set $q (i32.add ${get('out')} (i32.shl (i32.add (i32.mul (i32.add ${get('a')} (i32.const ${i})) ${get('k')}) (i32.add ${get('b')} (i32.const ${j}))) (i32.const 3))))\n` +
    `(f64.store ${get('q')} (f64.add (f64.load ${get('q')}) ${lane(`s${i}${j}`)}))`;
  return `(func (export "project") (param $rows i32) (param $m i32) (param $offset i32) (param $basis i32) (param $k i32) (param $d i32) (param $tile i32) (param $out i32)
  (local $stride i32) (local $p0 i32) (local $p1 i32) (local $a i32) (local $b i32) (local $p i32) (local $q i32) (local $c v128) (local $v v128)
  ${[
    ...pairs.map(([i, j]) => `(local $s${i}${j} v128)`),
    ...r.map((i) => `(local $u${i} v128)`),
    ...r.map((i) => `(local $pa${i} i32)`),
    ...c4.map((j) => `(local $pb${j} i32)`),
  ].join(' ')}
  (local.set $stride (i32.shl ${get('d')} (i32.const 2)))
  (local.set $p0 (i32.const 0))
  ${loop('tiles', `(i32.ge_u ${get('p0')} ${get('d')})`, [
    `(local.set $p1 (select ${get('d')} (i32.add ${get('p0')} ${get('tile')}) (i32.lt_u ${get('d')} (i32.add ${get('p0')} ${get('tile')}))))`,
    '(local.set $a (i32.const 0))',
    loop('frames', `(i32.ge_u ${get('a')} ${get('m')})`, [
      ...r.map((i) => `(local.set $pa${i} (i32.load (i32.add ${get('rows')} (i32.shl (i32.add ${get('a')} (i32.const ${i})) (i32.const 2)))))`),
      '(local.set $b (i32.const 0))',
      loop('components', `(i32.ge_u ${get('b')} ${get('k')})`, [
        ...c4.map((j) => `(local.set $pb${j} (i32.add ${get('basis')} (i32.mul (i32.add ${get('b')} (i32.const ${j})) ${get('stride')})))`),
        pairs.map(([i, j]) => `(local.set $s${i}${j} ${zero})`).join(' '),
        `(local.set $p (i32.shl ${get('p0')} (i32.const 2)))`,
        loop('pixels', `(i32.ge_u ${get('p')} (i32.shl ${get('p1')} (i32.const 2)))`, [
          `(local.set $c (v128.load (i32.add ${get('offset')} ${get('p')})))`,
          ...r.map((i) => `(local.set $u${i} (f32x4.sub (v128.load (i32.add ${get(`pa${i}`)} ${get('p')})) ${get('c')}))`),
          ...c4.map(
            (j) =>
              `(local.set $v (v128.load (i32.add ${get(`pb${j}`)} ${get('p')})))\n` +
              r.map((i) => `(local.set $s${i}${j} (f32x4.add ${get(`s${i}${j}`)} (f32x4.mul ${get(`u${i}`)} ${get('v')})))`).join('\n'),
          ),
          bump('p', '(i32.const 16)'),
        ]),
        ...pairs.map(([i, j]) => cell(i, j)),
        bump('b', `(i32.const ${BLOCK})`),
      ]),
      bump('a', `(i32.const ${PROJECT_ROWS})`),
    ]),
    `(local.set $p0 ${get('p1')})`,
  ])})`;
}

/**
 * residual(rows, m, offset, basis, k, d, coefficients, tile, out): squared residuals of m frames.
 * `rows`, `offset` and `basis` as in project (m any count); `coefficients` is m × k Float32,
 * frame-major. For each frame, r = frame − offset − Σ_j coefficients[t, j] · basis[j] (four
 * pixels per instruction, BLOCK components at a time), and r² is added into out (d Float64,
 * zeroed by the caller), summed in f32 lanes over `tile` frames at a time and the tile sums added
 * in f64.
 */
function residualText(): string {
  const get = (x: string) => `(local.get $${x})`;
  const q = [...Array(BLOCK).keys()];
  return `(func (export "residual") (param $rows i32) (param $m i32) (param $offset i32) (param $basis i32) (param $k i32) (param $d i32) (param $coefficients i32) (param $tile i32) (param $out i32)
  (local $stride i32) (local $p i32) (local $t0 i32) (local $t1 i32) (local $t i32) (local $j i32) (local $y i32) (local $u i32) (local $o i32)
  (local $c v128) (local $r v128) (local $acc v128) ${[...q, BLOCK].map((j) => `(local $row${j} i32)`).join(' ')}
  (local.set $stride (i32.shl ${get('d')} (i32.const 2)))
  ${[...q, BLOCK].map((j) => `(local.set $row${j} (i32.mul ${get('stride')} (i32.const ${j})))`).join(' ')}
  (local.set $p (i32.const 0))
  ${loop('chunks', `(i32.ge_u ${get('p')} ${get('stride')})`, [
    `(local.set $c (v128.load (i32.add ${get('offset')} ${get('p')})))`,
    '(local.set $t0 (i32.const 0))',
    loop('tiles', `(i32.ge_u ${get('t0')} ${get('m')})`, [
      `(local.set $t1 (select ${get('m')} (i32.add ${get('t0')} ${get('tile')}) (i32.lt_u ${get('m')} (i32.add ${get('t0')} ${get('tile')}))))`,
      `(local.set $acc ${zero})`,
      `(local.set $t ${get('t0')})`,
      loop('frames', `(i32.ge_u ${get('t')} ${get('t1')})`, [
        `(local.set $r (f32x4.sub (v128.load (i32.add (i32.load (i32.add ${get('rows')} (i32.shl ${get('t')} (i32.const 2)))) ${get('p')})) ${get('c')}))`,
        `(local.set $y (i32.add ${get('coefficients')} (i32.shl (i32.mul ${get('t')} ${get('k')}) (i32.const 2))))`,
        `(local.set $u (i32.add ${get('basis')} ${get('p')}))`,
        '(local.set $j (i32.const 0))',
        loop('components', `(i32.ge_u ${get('j')} ${get('k')})`, [
          ...q.map((j) =>
            `(local.set $r (f32x4.sub ${get('r')} (f32x4.mul (v128.load32_splat offset=${4 * j} ${get('y')}) ` +
            `(v128.load (i32.add ${get('u')} ${get(`row${j}`)})))))`,
          ),
          bump('y', `(i32.const ${4 * BLOCK})`),
          bump('u', get(`row${BLOCK}`)),
          bump('j', `(i32.const ${BLOCK})`),
        ]),
        `(local.set $acc (f32x4.add ${get('acc')} (f32x4.mul ${get('r')} ${get('r')})))`,
        bump('t', '(i32.const 1)'),
      ]),
      `(local.set $o (i32.add ${get('out')} (i32.shl ${get('p')} (i32.const 1))))`,
      addWide(get('o'), get('acc')),
      `(local.set $t0 ${get('t1')})`,
    ]),
    bump('p', '(i32.const 16)'),
  ])})`;
}

/** The text of the kernel module: the functions above, sharing one imported memory. */
export function kernelText(): string {
  return `(module
  (memory (import "env" "memory") 1)
  ${[centreText(), gramText(), combineText(), projectText(), residualText()].join('\n  ')})
`;
}

/** The assembled learning module. */
export async function buildKernelsWasm(): Promise<Uint8Array> {
  return assemble('learning.wat', kernelText());
}

/** The assembled counting module. */
export async function buildCountingKernelsWasm(): Promise<Uint8Array> {
  return assemble('counting.wat', countingKernelText());
}

async function assemble(name: string, text: string): Promise<Uint8Array> {
  const wabt = await wabtInit();
  const module = wabt.parseWat(name, text, { simd: true });
  try {
    module.validate();
    return new Uint8Array(module.toBinary({}).buffer);
  } finally {
    module.destroy();
  }
}

if (process.argv[1] === fileURLToPath(import.meta.url)) {
  for (const [file, build] of [['learning.wasm', buildKernelsWasm], ['counting.wasm', buildCountingKernelsWasm]] as const) {
    const target = fileURLToPath(new URL(`../src/vision/kernels/${file}`, import.meta.url));
    writeFileSync(target, await build());
    process.stdout.write(`wrote ${target}\n`);
  }
}
