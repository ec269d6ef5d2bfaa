;; combine(rows, m, weights, k, d, tile, out): k weighted sums of m frames.
;;
;; rows:    m i32 byte addresses of the frames (d Float32 values each, d a multiple of 8).
;; weights: m × k Float32, frame-major (the k weights of frame t at weights[t · k ..]), k a
;;          multiple of 4.
;; out:     k × d Float64, component-major, zeroed by the caller.
;; Adds Σ_t weights[t, j] · frame_t[i] into out[j · d + i]: blocks of eight pixels (two vectors,
;; h = 0, 1) × 4 components (j = 0..3 of the group g), whose 8 accumulators stay in registers
;; while each loaded weight serves two products and each loaded pixel vector four; the products
;; summed in f32 lanes over `tile` frames at a time and the tile sums added in f64.
;;
;; Repeat markers (scripts/buildKernels.ts): $s<h><j> accumulates pixel vector h of component
;; g + j.
(module
  (memory (import "env" "memory") 1)
  (func (export "combine") (param $rows i32) (param $m i32) (param $weights i32) (param $k i32) (param $d i32) (param $tile i32) (param $out i32)
    (local $end i32) (local $p i32) (local $g i32) (local $t0 i32) (local $t1 i32) (local $t i32) (local $w i32) (local $o i32) (local $a i32) (local $x v128)
    (local $v0 v128) (local $v1 v128)
    ;; @for h in 0..1
    ;; @for j in 0..3
    (local $s{h}{j} v128)
    ;; @end
    ;; @end
    (local.set $end (i32.shl (local.get $d) (i32.const 2)))
    ;; pixels p .. p + 7 (bytes p .. p + 31)
    (local.set $p (i32.const 0))
    (block $chunks_done (loop $chunks
      (br_if $chunks_done (i32.ge_u (local.get $p) (local.get $end)))
      ;; components g .. g + 3
      (local.set $g (i32.const 0))
      (block $groups_done (loop $groups
        (br_if $groups_done (i32.ge_u (local.get $g) (local.get $k)))
        ;; frame tiles [t0, t1)
        (local.set $t0 (i32.const 0))
        (block $tiles_done (loop $tiles
          (br_if $tiles_done (i32.ge_u (local.get $t0) (local.get $m)))
          (local.set $t1 (select (local.get $m) (i32.add (local.get $t0) (local.get $tile)) (i32.lt_u (local.get $m) (i32.add (local.get $t0) (local.get $tile)))))
          ;; @for h in 0..1
          ;; @for j in 0..3
          (local.set $s{h}{j} (v128.const i32x4 0 0 0 0))
          ;; @end
          ;; @end
          (local.set $t (local.get $t0))
          (block $frames_done (loop $frames
            (br_if $frames_done (i32.ge_u (local.get $t) (local.get $t1)))
            (local.set $a (i32.add (i32.load (i32.add (local.get $rows) (i32.shl (local.get $t) (i32.const 2)))) (local.get $p)))
            (local.set $v0 (v128.load (local.get $a)))
            (local.set $v1 (v128.load offset=16 (local.get $a)))
            (local.set $w (i32.add (local.get $weights) (i32.shl (i32.add (i32.mul (local.get $t) (local.get $k)) (local.get $g)) (i32.const 2))))
            ;; @for j in 0..3
            (local.set $x (v128.load32_splat offset={4*j} (local.get $w)))
            ;; @for h in 0..1
            (local.set $s{h}{j} (f32x4.add (local.get $s{h}{j}) (f32x4.mul (local.get $v{h}) (local.get $x))))
            ;; @end
            ;; @end
            (local.set $t (i32.add (local.get $t) (i32.const 1)))
            (br $frames)))
          ;; out[(g + j) · d + p/4 + 4h ..] += s<h><j>, each f32 lane widened to f64
          ;; @for j in 0..3
          ;; @for h in 0..1
          (local.set $o (i32.add (local.get $out) (i32.add (i32.shl (i32.mul (i32.add (local.get $g) (i32.const {j})) (local.get $d)) (i32.const 3)) (i32.add (i32.shl (local.get $p) (i32.const 1)) (i32.const {32*h})))))
          (v128.store (local.get $o) (f64x2.add (v128.load (local.get $o)) (f64x2.promote_low_f32x4 (local.get $s{h}{j}))))
          (v128.store offset=16 (local.get $o) (f64x2.add (v128.load offset=16 (local.get $o))
            (f64x2.promote_low_f32x4 (i8x16.shuffle 8 9 10 11 12 13 14 15 8 9 10 11 12 13 14 15 (local.get $s{h}{j}) (local.get $s{h}{j})))))
          ;; @end
          ;; @end
          (local.set $t0 (local.get $t1))
          (br $tiles)))
        (local.set $g (i32.add (local.get $g) (i32.const 4)))
        (br $groups)))
      (local.set $p (i32.add (local.get $p) (i32.const 32)))
      (br $chunks))))
)
