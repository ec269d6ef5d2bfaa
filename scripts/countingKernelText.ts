// The WebAssembly text of the counting kernels (src/vision/kernels/counting.wasm, assembled by
// scripts/buildKernels.ts): the per-frame residual pass, the projection onto the subspace, and the
// smoothed threshold that writes a packed mask. Four pixels per instruction; see
// src/vision/countingKernels.ts for the memory layout they run on.

import { SELECT_BINS as KERNEL_SELECT_BINS } from '../src/vision/countingKernels.ts';

/**
 * Components are taken four at a time; a module has a variant for each group count from 1 to 6
 * (k ≤ 24, MAX_KERNEL_COMPONENTS in src/vision/countingKernels.ts).
 */
export const COUNTING_GROUPS = [1, 2, 3, 4, 5, 6] as const;
/** Pixels whose f32 lane sums are added into the f64 totals at a time. */
export const COUNTING_TILE = 256;

const zero = '(v128.const i32x4 0 0 0 0)';
const get = (x: string) => `(local.get $${x})`;
const bump = (x: string, step: string) => `(local.set $${x} (i32.add (local.get $${x}) ${step}))`;
const loop = (name: string, exit: string, body: string[]) =>
  `(block $${name}_done (loop $${name}\n(br_if $${name}_done ${exit})\n${body.join('\n')}\n(br $${name})))`;
/** The four f32 lanes of a v128 local summed in f64: (l0 + l1) + (l2 + l3). */
const laneSum = (v: string) =>
  `(f64.add (f64.add (f64.promote_f32 (f32x4.extract_lane 0 ${get(v)})) (f64.promote_f32 (f32x4.extract_lane 1 ${get(v)}))) ` +
  `(f64.add (f64.promote_f32 (f32x4.extract_lane 2 ${get(v)})) (f64.promote_f32 (f32x4.extract_lane 3 ${get(v)}))))`;
const range = (n: number) => [...Array(n).keys()];

/**
 * residual_g{G}(n, z, mean, basis, plane, y, weight, norm, sums).
 * Over n pixels (a multiple of 4) of Float32 arrays at byte addresses z, mean, weight (1/σ²) and
 * the 4G component planes of the basis (plane j at basis + j · plane bytes), with the 4G
 * coordinates y (Float32; those past k are 0): r = (z − μ) − Σ_j y_j B_j, e = r², v = e · w.
 * Stores v at norm (n Float32), adds Σ e and Σ v (f32 lanes over COUNTING_TILE pixels, tiles
 * added in f64) into sums[0] and sums[1] (Float64, set by the caller).
 */
function residualText(groups: number): string {
  const k = 4 * groups;
  const js = range(k);
  return `(func (export "residual_g${groups}") (param $n i32) (param $z i32) (param $mean i32) (param $basis i32) (param $plane i32) (param $y i32) (param $weight i32) (param $norm i32) (param $sums i32)
  (local $p i32) (local $end i32) (local $tile i32) (local $bp i32)
  (local $r v128) (local $e v128) (local $v v128) (local $ae v128) (local $av v128) (local $se f64) (local $sv f64)
  ${js.map((j) => `(local $y${j} v128) (local $o${j} i32)`).join(' ')}
  ${js.map((j) => `(local.set $y${j} (v128.load32_splat offset=${4 * j} ${get('y')}))`).join(' ')}
  ${js.map((j) => `(local.set $o${j} (i32.mul ${get('plane')} (i32.const ${j})))`).join(' ')}
  (local.set $se (f64.load ${get('sums')}))
  (local.set $sv (f64.load offset=8 ${get('sums')}))
  (local.set $end (i32.shl ${get('n')} (i32.const 2)))
  (local.set $p (i32.const 0))
  ${loop('tiles', `(i32.ge_u ${get('p')} ${get('end')})`, [
    `(local.set $tile (select ${get('end')} (i32.add ${get('p')} (i32.const ${4 * COUNTING_TILE})) (i32.lt_u ${get('end')} (i32.add ${get('p')} (i32.const ${4 * COUNTING_TILE})))))`,
    `(local.set $ae ${zero}) (local.set $av ${zero})`,
    loop('pixels', `(i32.ge_u ${get('p')} ${get('tile')})`, [
      `(local.set $r (f32x4.sub (v128.load (i32.add ${get('z')} ${get('p')})) (v128.load (i32.add ${get('mean')} ${get('p')}))))`,
      `(local.set $bp (i32.add ${get('basis')} ${get('p')}))`,
      ...js.map((j) => `(local.set $r (f32x4.sub ${get('r')} (f32x4.mul (v128.load (i32.add ${get('bp')} ${get(`o${j}`)})) ${get(`y${j}`)})))`),
      `(local.set $e (f32x4.mul ${get('r')} ${get('r')}))`,
      `(local.set $v (f32x4.mul ${get('e')} (v128.load (i32.add ${get('weight')} ${get('p')}))))`,
      `(v128.store (i32.add ${get('norm')} ${get('p')}) ${get('v')})`,
      `(local.set $ae (f32x4.add ${get('ae')} ${get('e')}))`,
      `(local.set $av (f32x4.add ${get('av')} ${get('v')}))`,
      bump('p', '(i32.const 16)'),
    ]),
    `(local.set $se (f64.add ${get('se')} ${laneSum('ae')}))`,
    `(local.set $sv (f64.add ${get('sv')} ${laneSum('av')}))`,
  ])}
  (f64.store ${get('sums')} ${get('se')})
  (f64.store offset=8 ${get('sums')} ${get('sv')}))`;
}

/**
 * project_g{G}(n, z, mean, basis, plane, out): out[j] = Σ_i B_j[i] (z_i − μ_i) for the 4G
 * component planes, over n pixels (a multiple of 4), laid out as in residual; the products summed
 * in f32 lanes over COUNTING_TILE pixels, tiles added in f64 into out (4G Float64, zeroed here).
 */
function projectText(groups: number): string {
  const k = 4 * groups;
  const js = range(k);
  return `(func (export "project_g${groups}") (param $n i32) (param $z i32) (param $mean i32) (param $basis i32) (param $plane i32) (param $out i32)
  (local $p i32) (local $end i32) (local $tile i32) (local $bp i32) (local $c v128)
  ${js.map((j) => `(local $a${j} v128) (local $o${j} i32) (local $s${j} f64)`).join(' ')}
  ${js.map((j) => `(local.set $o${j} (i32.mul ${get('plane')} (i32.const ${j})))`).join(' ')}
  (local.set $end (i32.shl ${get('n')} (i32.const 2)))
  (local.set $p (i32.const 0))
  ${loop('tiles', `(i32.ge_u ${get('p')} ${get('end')})`, [
    `(local.set $tile (select ${get('end')} (i32.add ${get('p')} (i32.const ${4 * COUNTING_TILE})) (i32.lt_u ${get('end')} (i32.add ${get('p')} (i32.const ${4 * COUNTING_TILE})))))`,
    js.map((j) => `(local.set $a${j} ${zero})`).join(' '),
    loop('pixels', `(i32.ge_u ${get('p')} ${get('tile')})`, [
      `(local.set $c (f32x4.sub (v128.load (i32.add ${get('z')} ${get('p')})) (v128.load (i32.add ${get('mean')} ${get('p')}))))`,
      `(local.set $bp (i32.add ${get('basis')} ${get('p')}))`,
      ...js.map((j) => `(local.set $a${j} (f32x4.add ${get(`a${j}`)} (f32x4.mul (v128.load (i32.add ${get('bp')} ${get(`o${j}`)})) ${get('c')})))`),
      bump('p', '(i32.const 16)'),
    ]),
    ...js.map((j) => `(local.set $s${j} (f64.add ${get(`s${j}`)} ${laneSum(`a${j}`)}))`),
  ])}
  ${js.map((j) => `(f64.store offset=${8 * j} ${get('out')} ${get(`s${j}`)})`).join(' ')})`;
}

/**
 * threshold(v, h, stride, rows, words, tn, ts, scale, bits): the 3×3 box mean of the normalised
 * energy against a per-pixel threshold, written as a packed mask.
 *
 * v: `rows` rows of `stride` Float32 values (stride a multiple of 4, at least 32 · words and
 * greater than the image width, the values past the width 0), with one zero row before and after and 4 zero values
 * before and after those: so the neighbours of every image pixel are inside the array and those
 * outside the image are 0. h: a work array of the same shape. First h = the sum of each value and
 * its left and right neighbours, over the guard rows too; then per pixel s = h above + h + h below,
 * the 3×3 sum of the in-image values, and the pixel is set when s > tn · scale and v > ts · scale
 * (tn = t² × the number of in-image pixels of the window, ts = t² × share²; both `rows` × stride
 * without guards, tn = +∞ past the width). Bit x of word y · words + ⌊x/32⌋ of `bits` (i32) is
 * pixel (x, y), least significant bit leftmost.
 */
function thresholdText(): string {
  const blocks = range(8);
  return `(func (export "threshold") (param $v i32) (param $h i32) (param $stride i32) (param $rows i32) (param $words i32) (param $tn i32) (param $ts i32) (param $scale f32) (param $bits i32)
  (local $p i32) (local $end i32) (local $rowBytes i32) (local $y i32) (local $w i32) (local $q i32) (local $word i32) (local $sc v128) (local $out i32)
  (local.set $rowBytes (i32.shl ${get('stride')} (i32.const 2)))
  (local.set $sc (f32x4.splat ${get('scale')}))
  ;; h = left + centre + right over the guard row above, the rows and the guard row below
  (local.set $p (i32.sub (i32.const 0) ${get('rowBytes')}))
  (local.set $end (i32.mul ${get('rowBytes')} (i32.add ${get('rows')} (i32.const 1))))
  ${loop('horizontal', `(i32.ge_s ${get('p')} ${get('end')})`, [
    `(local.set $q (i32.add ${get('v')} ${get('p')}))`,
    `(v128.store (i32.add ${get('h')} ${get('p')}) (f32x4.add (f32x4.add (v128.load (i32.sub ${get('q')} (i32.const 4))) (v128.load ${get('q')})) (v128.load (i32.add ${get('q')} (i32.const 4)))))`,
    bump('p', '(i32.const 16)'),
  ])}
  (local.set $out ${get('bits')})
  (local.set $y (i32.const 0))
  ${loop('rows', `(i32.ge_u ${get('y')} ${get('rows')})`, [
    `(local.set $p (i32.mul ${get('y')} ${get('rowBytes')}))`,
    '(local.set $w (i32.const 0))',
    loop('words', `(i32.ge_u ${get('w')} ${get('words')})`, [
      '(local.set $word (i32.const 0))',
      ...blocks.map((b) => {
        const at = (base: string, offset: string) => `(v128.load offset=${16 * b} (i32.add ${get(base)} ${offset}))`;
        const s = `(f32x4.add (f32x4.add ${at('h', `(i32.sub ${get('p')} ${get('rowBytes')})`)} ${at('h', get('p'))}) ${at('h', `(i32.add ${get('p')} ${get('rowBytes')})`)})`;
        const set = `(v128.and (f32x4.gt ${s} (f32x4.mul ${at('tn', get('p'))} ${get('sc')})) (f32x4.gt ${at('v', get('p'))} (f32x4.mul ${at('ts', get('p'))} ${get('sc')})))`;
        return `(local.set $word (i32.or ${get('word')} (i32.shl (i32x4.bitmask ${set}) (i32.const ${4 * b}))))`;
      }),
      `(i32.store ${get('out')} ${get('word')})`,
      bump('out', '(i32.const 4)'),
      bump('p', '(i32.const 128)'),
      bump('w', '(i32.const 1)'),
    ]),
    bump('y', '(i32.const 1)'),
  ])})`;
}

/**
 * robust_g{G}(n, z, mean, basis, plane, y, weight, limit, left, acc, outer, rhs) → count: one
 * robust step's left-out pixels and the change of their sums, in the same pass that finds them.
 * Over n pixels laid out as in residual: r, v as there; a pixel is left out when its v is not
 * ≤ limit (NaN included). `left` (n i32, all bits set for a pixel left out) holds the previous
 * step's left-out set on entry (all 0 before the first step) and this step's on return. For every
 * pixel that joined the set (w = +1) or left it (w = −1), with c = z − μ and b its 4G basis
 * values, adds w · b_p · b_q into outer[q · 4G + p] for p ≤ q and w · b_p · c into rhs[p]
 * (Float64, kept by the caller from step to step): so outer and rhs are always the sums over the
 * current set, at the cost of the pixels that changed. Returns the size of the set. The products
 * are summed in f32 lanes over COUNTING_TILE pixels in `acc` (work memory: 4G(4G + 1)/2 + 4G
 * vectors, zeroed here) and added into the f64 sums after each tile that had any.
 */
function robustText(groups: number): string {
  const k = 4 * groups;
  const js = range(k);
  const pairs = js.flatMap((q) => js.filter((p) => p <= q).map((p) => [p, q] as const));
  const accumulators = pairs.length + k;
  const accAt = (slot: number) => `(i32.add ${get('acc')} (i32.const ${16 * slot}))`;
  const addTo = (slot: number, product: string) => `(v128.store ${accAt(slot)} (f32x4.add (v128.load ${accAt(slot)}) ${product}))`;
  const flushTo = (slot: number, target: string) =>
    `(local.set $t (v128.load ${accAt(slot)}))
(f64.store ${target} (f64.add (f64.load ${target}) ${laneSum('t')}))
(v128.store ${accAt(slot)} ${zero})`;
  return `(func (export "robust_g${groups}") (param $n i32) (param $z i32) (param $mean i32) (param $basis i32) (param $plane i32) (param $y i32) (param $weight i32) (param $limit f32) (param $left i32) (param $acc i32) (param $outer i32) (param $rhs i32) (result i32)
  (local $p i32) (local $end i32) (local $tile i32) (local $count i32) (local $any i32) (local $bp i32) (local $slot i32)
  (local $c v128) (local $r v128) (local $v v128) (local $bad v128) (local $lim v128) (local $t v128) (local $was v128) (local $w v128)
  ${js.map((j) => `(local $y${j} v128) (local $o${j} i32) (local $b${j} v128)`).join(' ')}
  ${js.map((j) => `(local.set $y${j} (v128.load32_splat offset=${4 * j} ${get('y')}))`).join(' ')}
  ${js.map((j) => `(local.set $o${j} (i32.mul ${get('plane')} (i32.const ${j})))`).join(' ')}
  (local.set $lim (f32x4.splat ${get('limit')}))
  (local.set $slot (i32.const 0))
  ${loop('clear', `(i32.ge_u ${get('slot')} (i32.const ${16 * accumulators}))`, [`(v128.store (i32.add ${get('acc')} ${get('slot')}) ${zero})`, bump('slot', '(i32.const 16)')])}
  (local.set $end (i32.shl ${get('n')} (i32.const 2)))
  (local.set $p (i32.const 0))
  ${loop('tiles', `(i32.ge_u ${get('p')} ${get('end')})`, [
    `(local.set $tile (select ${get('end')} (i32.add ${get('p')} (i32.const ${4 * COUNTING_TILE})) (i32.lt_u ${get('end')} (i32.add ${get('p')} (i32.const ${4 * COUNTING_TILE})))))`,
    '(local.set $any (i32.const 0))',
    loop('pixels', `(i32.ge_u ${get('p')} ${get('tile')})`, [
      `(local.set $c (f32x4.sub (v128.load (i32.add ${get('z')} ${get('p')})) (v128.load (i32.add ${get('mean')} ${get('p')}))))`,
      `(local.set $bp (i32.add ${get('basis')} ${get('p')}))`,
      ...js.map((j) => `(local.set $b${j} (v128.load (i32.add ${get('bp')} ${get(`o${j}`)})))`),
      `(local.set $r ${get('c')})`,
      ...js.map((j) => `(local.set $r (f32x4.sub ${get('r')} (f32x4.mul ${get(`b${j}`)} ${get(`y${j}`)})))`),
      `(local.set $v (f32x4.mul (f32x4.mul ${get('r')} ${get('r')}) (v128.load (i32.add ${get('weight')} ${get('p')}))))`,
      `(local.set $bad (v128.not (f32x4.le ${get('v')} ${get('lim')})))`,
      `(local.set $count (i32.add ${get('count')} (i32.popcnt (i32x4.bitmask ${get('bad')}))))`,
      `(local.set $was (v128.load (i32.add ${get('left')} ${get('p')})))`,
      `(v128.store (i32.add ${get('left')} ${get('p')}) ${get('bad')})`,
      `(if (v128.any_true (v128.xor ${get('bad')} ${get('was')})) (then
        (local.set $any (i32.const 1))
        ;; w = +1 where the pixel joined, −1 where it left, 0 where it stayed (the +0.0 bit pattern)
        (local.set $w (v128.and (v128.bitselect (v128.const f32x4 1 1 1 1) (v128.const f32x4 -1 -1 -1 -1) ${get('bad')}) (v128.xor ${get('bad')} ${get('was')})))
        (local.set $c (f32x4.mul ${get('c')} ${get('w')}))
        ${pairs.map(([p, q], slot) => addTo(slot, `(f32x4.mul (f32x4.mul ${get(`b${p}`)} ${get('w')}) ${get(`b${q}`)})`)).join('\n        ')}
        ${js.map((p) => addTo(pairs.length + p, `(f32x4.mul ${get(`b${p}`)} ${get('c')})`)).join('\n        ')}))`,
      bump('p', '(i32.const 16)'),
    ]),
    `(if ${get('any')} (then
      ${pairs.map(([p, q], slot) => flushTo(slot, `(i32.add ${get('outer')} (i32.const ${8 * (q * k + p)}))`)).join('\n      ')}
      ${js.map((p) => flushTo(pairs.length + p, `(i32.add ${get('rhs')} (i32.const ${8 * p}))`)).join('\n      ')}))`,
  ])}
  ${get('count')})`;
}

/** gather(src, index, n, dst): dst[s] = src[index[s]] for s < n (Float32 values, i32 indices). */
function gatherText(): string {
  return `(func (export "gather") (param $src i32) (param $index i32) (param $n i32) (param $dst i32)
  (local $s i32) (local $end i32)
  (local.set $end (i32.shl ${get('n')} (i32.const 2)))
  ${loop('values', `(i32.ge_u ${get('s')} ${get('end')})`, [
    `(f32.store (i32.add ${get('dst')} ${get('s')}) (f32.load (i32.add ${get('src')} (i32.shl (i32.load (i32.add ${get('index')} ${get('s')})) (i32.const 2)))))`,
    bump('s', '(i32.const 4)'),
  ])})`;
}

/**
 * morph(src, dst, tmp, rows, rowBytes, vectors, words, keep, radius, erode): one erosion (erode ≠ 0)
 * or dilation of a packed mask by the (2 · radius + 1)² square, radius 1..31, as morphologyBits
 * does it (a row pass of shifts, then a column pass), four words per instruction.
 *
 * Layout of src, dst and tmp: `rows` rows of rowBytes bytes from their address; each row's
 * `vectors` × 4 words hold its `words` words of pixels (bit x mod 32 of word ⌊x/32⌋), and the
 * 4 words before a row's address (the end of the previous row, for row 0 memory reserved by the
 * caller) and after its last vector are guards, as are 4 words after the last row. This sets
 * the guards, the words past `words` and the bits of the last word not in `keep` to the step's
 * outside value (set for an erosion, unset for a dilation), so the border is opencv's default.
 * dst gets the result (its guards are not set); tmp is work memory.
 */
function morphText(): string {
  const body = (op: string, outside: string) => `
    ;; guards, the words past the row end, and the row end's padding bits
    (local.set $y (i32.const 0))
    ${loop(`guards_${op}`, `(i32.gt_u ${get('y')} ${get('rows')})`, [
      `(local.set $row (i32.add ${get('src')} (i32.mul ${get('y')} ${get('rowBytes')})))`,
      `(v128.store (i32.sub ${get('row')} (i32.const 16)) ${outside})`,
      `(if (i32.lt_u ${get('y')} ${get('rows')}) (then
        (local.set $w ${get('words')})
        ${loop(`extra_${op}`, `(i32.ge_u ${get('w')} (i32.shl ${get('vectors')} (i32.const 2)))`, [
          `(i32.store (i32.add ${get('row')} (i32.shl ${get('w')} (i32.const 2))) (i32x4.extract_lane 0 ${outside}))`,
          bump('w', '(i32.const 1)'),
        ])}
        (local.set $q (i32.add ${get('row')} (i32.shl (i32.sub ${get('words')} (i32.const 1)) (i32.const 2))))
        (i32.store ${get('q')} (i32.or (i32.and (i32.load ${get('q')}) ${get('keep')}) (i32.and (i32x4.extract_lane 0 ${outside}) (i32.xor ${get('keep')} (i32.const -1)))))))`,
      bump('y', '(i32.const 1)'),
    ])}
    ;; rows: each word with its neighbours shifted by 1..radius pixels either way
    (local.set $y (i32.const 0))
    ${loop(`rows_${op}`, `(i32.ge_u ${get('y')} ${get('rows')})`, [
      `(local.set $off (i32.mul ${get('y')} ${get('rowBytes')}))`,
      `(local.set $end (i32.add ${get('off')} (i32.shl ${get('vectors')} (i32.const 4))))`,
      loop(`row_vectors_${op}`, `(i32.ge_u ${get('off')} ${get('end')})`, [
        `(local.set $q (i32.add ${get('src')} ${get('off')}))`,
        `(local.set $a (v128.load ${get('q')}))`,
        `(local.set $right (v128.load (i32.add ${get('q')} (i32.const 4))))`,
        `(local.set $left (v128.load (i32.sub ${get('q')} (i32.const 4))))`,
        `(local.set $acc ${get('a')})`,
        '(local.set $s (i32.const 1))',
        loop(`shifts_${op}`, `(i32.gt_u ${get('s')} ${get('radius')})`, [
          `(local.set $acc (${op} ${get('acc')} (v128.or (i32x4.shr_u ${get('a')} ${get('s')}) (i32x4.shl ${get('right')} (i32.sub (i32.const 32) ${get('s')})))))`,
          `(local.set $acc (${op} ${get('acc')} (v128.or (i32x4.shl ${get('a')} ${get('s')}) (i32x4.shr_u ${get('left')} (i32.sub (i32.const 32) ${get('s')})))))`,
          bump('s', '(i32.const 1)'),
        ]),
        `(v128.store (i32.add ${get('tmp')} ${get('off')}) ${get('acc')})`,
        bump('off', '(i32.const 16)'),
      ]),
      bump('y', '(i32.const 1)'),
    ])}
    ;; columns: rows y − radius … y + radius inside the image
    (local.set $y (i32.const 0))
    ${loop(`columns_${op}`, `(i32.ge_u ${get('y')} ${get('rows')})`, [
      `(local.set $t0 (select (i32.sub ${get('y')} ${get('radius')}) (i32.const 0) (i32.ge_s (i32.sub ${get('y')} ${get('radius')}) (i32.const 0))))`,
      `(local.set $t1 (select (i32.add ${get('y')} ${get('radius')}) (i32.sub ${get('rows')} (i32.const 1)) (i32.lt_s (i32.add ${get('y')} ${get('radius')}) ${get('rows')})))`,
      '(local.set $v (i32.const 0))',
      loop(`column_vectors_${op}`, `(i32.ge_u ${get('v')} (i32.shl ${get('vectors')} (i32.const 4)))`, [
        `(local.set $acc ${outside})`,
        `(local.set $q (i32.add (i32.add ${get('tmp')} (i32.mul ${get('t0')} ${get('rowBytes')})) ${get('v')}))`,
        `(local.set $t ${get('t0')})`,
        loop(`column_rows_${op}`, `(i32.gt_s ${get('t')} ${get('t1')})`, [
          `(local.set $acc (${op} ${get('acc')} (v128.load ${get('q')})))`,
          bump('q', get('rowBytes')),
          bump('t', '(i32.const 1)'),
        ]),
        `(v128.store (i32.add (i32.add ${get('dst')} (i32.mul ${get('y')} ${get('rowBytes')})) ${get('v')}) ${get('acc')})`,
        bump('v', '(i32.const 16)'),
      ]),
      bump('y', '(i32.const 1)'),
    ])}`;
  return `(func (export "morph") (param $src i32) (param $dst i32) (param $tmp i32) (param $rows i32) (param $rowBytes i32) (param $vectors i32) (param $words i32) (param $keep i32) (param $radius i32) (param $erode i32)
  (local $y i32) (local $row i32) (local $w i32) (local $q i32) (local $off i32) (local $end i32) (local $s i32) (local $t i32) (local $t0 i32) (local $t1 i32) (local $v i32)
  (local $a v128) (local $left v128) (local $right v128) (local $acc v128)
  (if ${get('erode')}
    (then ${body('v128.and', '(v128.const i32x4 -1 -1 -1 -1)')})
    (else ${body('v128.or', zero)})))`;
}

/** Histogram bins of `select`: the top 12 bits of a Float32 (sign, exponent, 3 bits of mantissa). */
const SELECT_BINS = KERNEL_SELECT_BINS;

/**
 * select(values, n, kth, hist, out, result): the first half of an exact selection of the kth
 * smallest (0-based) of n non-negative Float32 values, by their bit patterns (which order as the
 * values do for non-negative floats; a radix selection): a histogram of the top 12 bits into
 * hist (SELECT_BINS i32, cleared here), the bin that holds the kth smallest, and its values
 * copied to out in their order. Writes the number of values in that bin to result[0] and the
 * rank of the kth smallest among them to result[1] (i32); selecting that rank among out[0 …
 * result[0]) gives the kth smallest of all n.
 */
function selectText(): string {
  return `(func (export "select") (param $values i32) (param $n i32) (param $kth i32) (param $hist i32) (param $out i32) (param $result i32)
  (local $s i32) (local $end i32) (local $b i32) (local $at i32) (local $cum i32) (local $c i32) (local $m i32) (local $x i32)
  (local.set $s (i32.const 0))
  ${loop('clear', `(i32.ge_u ${get('s')} (i32.const ${4 * SELECT_BINS}))`, [`(v128.store (i32.add ${get('hist')} ${get('s')}) ${zero})`, bump('s', '(i32.const 16)')])}
  (local.set $end (i32.shl ${get('n')} (i32.const 2)))
  (local.set $s (i32.const 0))
  ${loop('count', `(i32.ge_u ${get('s')} ${get('end')})`, [
    `(local.set $at (i32.add ${get('hist')} (i32.shl (i32.shr_u (i32.load (i32.add ${get('values')} ${get('s')})) (i32.const 20)) (i32.const 2))))`,
    `(i32.store ${get('at')} (i32.add (i32.load ${get('at')}) (i32.const 1)))`,
    bump('s', '(i32.const 4)'),
  ])}
  (local.set $b (i32.const 0))
  (block $found (loop $scan
    (local.set $c (i32.load (i32.add ${get('hist')} (i32.shl ${get('b')} (i32.const 2)))))
    (br_if $found (i32.gt_u (i32.add ${get('cum')} ${get('c')}) ${get('kth')}))
    (local.set $cum (i32.add ${get('cum')} ${get('c')}))
    ${bump('b', '(i32.const 1)')}
    (br_if $scan (i32.lt_u ${get('b')} (i32.const ${SELECT_BINS})))))
  (local.set $s (i32.const 0))
  ${loop('collect', `(i32.ge_u ${get('s')} ${get('end')})`, [
    `(local.set $x (i32.load (i32.add ${get('values')} ${get('s')})))`,
    `(if (i32.eq (i32.shr_u ${get('x')} (i32.const 20)) ${get('b')}) (then
      (i32.store (i32.add ${get('out')} (i32.shl ${get('m')} (i32.const 2))) ${get('x')})
      ${bump('m', '(i32.const 1)')}))`,
    bump('s', '(i32.const 4)'),
  ])}
  (i32.store ${get('result')} ${get('m')})
  (i32.store offset=4 ${get('result')} (i32.sub ${get('kth')} ${get('cum')})))`;
}

/**
 * pad(src, width, rows, stride, dst): copies `rows` rows of `width` Float32 values, one after the
 * other at src, to rows `stride` values apart at dst (the values past the width are not touched).
 */
function padText(): string {
  return `(func (export "pad") (param $src i32) (param $width i32) (param $rows i32) (param $stride i32) (param $dst i32)
  (local $y i32) (local $x i32) (local $bulk i32) (local $rowBytes i32) (local $from i32) (local $to i32)
  (local.set $rowBytes (i32.shl ${get('width')} (i32.const 2)))
  (local.set $bulk (i32.and ${get('rowBytes')} (i32.const -16)))
  ${loop('rows', `(i32.ge_u ${get('y')} ${get('rows')})`, [
    `(local.set $from (i32.add ${get('src')} (i32.mul ${get('y')} ${get('rowBytes')})))`,
    `(local.set $to (i32.add ${get('dst')} (i32.shl (i32.mul ${get('y')} ${get('stride')}) (i32.const 2))))`,
    '(local.set $x (i32.const 0))',
    loop('vectors', `(i32.ge_u ${get('x')} ${get('bulk')})`, [
      `(v128.store (i32.add ${get('to')} ${get('x')}) (v128.load (i32.add ${get('from')} ${get('x')})))`,
      bump('x', '(i32.const 16)'),
    ]),
    loop('rest', `(i32.ge_u ${get('x')} ${get('rowBytes')})`, [
      `(f32.store (i32.add ${get('to')} ${get('x')}) (f32.load (i32.add ${get('from')} ${get('x')})))`,
      bump('x', '(i32.const 4)'),
    ]),
    bump('y', '(i32.const 1)'),
  ])})`;
}

/** The text of the counting module: the functions above, sharing one imported memory. */
export function countingKernelText(): string {
  return `(module
  (memory (import "env" "memory") 1)
  ${[...COUNTING_GROUPS.flatMap((g) => [residualText(g), projectText(g), robustText(g)]), thresholdText(), gatherText(), morphText(), selectText(), padText()].join('\n  ')})
`;
}
