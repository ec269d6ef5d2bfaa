;; project(rows, m, offset, basis, k, d, tile, out): the coefficients of m frames in k basis rows.
;;
;; rows:   m i32 byte addresses of the frames (d Float32 values each, d a multiple of 4, m a
;;         multiple of 4).
;; offset: d Float32, subtracted from every frame.
;; basis:  k × d Float32, component-major, k a multiple of 4.
;; out:    m × k Float64, frame-major, zeroed by the caller.
;; Adds Σ_i (frame_t[i] − offset[i]) · basis[j, i] into out[t · k + j], in blocks of 2 frames
;; (a + i) × 4 components (b + j), the products summed in f32 lanes over `tile` pixels at a time
;; and the lane sums added in f64 (as in gram.wat).
;;
;; Repeat markers (scripts/buildKernels.ts): $s<i><j> accumulates frame a + i against
;; component b + j.
(module
  (memory (import "env" "memory") 1)
  (func (export "project") (param $rows i32) (param $m i32) (param $offset i32) (param $basis i32) (param $k i32) (param $d i32) (param $tile i32) (param $out i32)
    (local $stride i32) (local $p0 i32) (local $p1 i32) (local $a i32) (local $b i32) (local $p i32) (local $q i32) (local $c v128) (local $v v128)
    ;; @for i in 0..1
    ;; @for j in 0..3
    (local $s{i}{j} v128)
    ;; @end
    ;; @end
    (local $u0 v128) (local $u1 v128)
    (local $pa0 i32) (local $pa1 i32)
    (local $pb0 i32) (local $pb1 i32) (local $pb2 i32) (local $pb3 i32)
    (local.set $stride (i32.shl (local.get $d) (i32.const 2)))
    ;; pixel tiles [p0, p1)
    (local.set $p0 (i32.const 0))
    (block $tiles_done (loop $tiles
      (br_if $tiles_done (i32.ge_u (local.get $p0) (local.get $d)))
      (local.set $p1 (select (local.get $d) (i32.add (local.get $p0) (local.get $tile)) (i32.lt_u (local.get $d) (i32.add (local.get $p0) (local.get $tile)))))
      ;; frames a, a + 1
      (local.set $a (i32.const 0))
      (block $frames_done (loop $frames
        (br_if $frames_done (i32.ge_u (local.get $a) (local.get $m)))
        ;; @for i in 0..1
        (local.set $pa{i} (i32.load (i32.add (local.get $rows) (i32.shl (i32.add (local.get $a) (i32.const {i})) (i32.const 2)))))
        ;; @end
        ;; components b .. b + 3
        (local.set $b (i32.const 0))
        (block $components_done (loop $components
          (br_if $components_done (i32.ge_u (local.get $b) (local.get $k)))
          ;; @for j in 0..3
          (local.set $pb{j} (i32.add (local.get $basis) (i32.mul (i32.add (local.get $b) (i32.const {j})) (local.get $stride))))
          ;; @end
          ;; @for i in 0..1
          ;; @for j in 0..3
          (local.set $s{i}{j} (v128.const i32x4 0 0 0 0))
          ;; @end
          ;; @end
          (local.set $p (i32.shl (local.get $p0) (i32.const 2)))
          (block $pixels_done (loop $pixels
            (br_if $pixels_done (i32.ge_u (local.get $p) (i32.shl (local.get $p1) (i32.const 2))))
            (local.set $c (v128.load (i32.add (local.get $offset) (local.get $p))))
            ;; @for i in 0..1
            (local.set $u{i} (f32x4.sub (v128.load (i32.add (local.get $pa{i}) (local.get $p))) (local.get $c)))
            ;; @end
            ;; @for j in 0..3
            (local.set $v (v128.load (i32.add (local.get $pb{j}) (local.get $p))))
            ;; @for i in 0..1
            (local.set $s{i}{j} (f32x4.add (local.get $s{i}{j}) (f32x4.mul (local.get $u{i}) (local.get $v))))
            ;; @end
            ;; @end
            (local.set $p (i32.add (local.get $p) (i32.const 16)))
            (br $pixels)))
          ;; out[(a + i) · k + b + j] += (lane 0 + lane 1) + (lane 2 + lane 3) of s<i><j>, in f64
          ;; @for i in 0..1
          ;; @for j in 0..3
          (local.set $q (i32.add (local.get $out) (i32.shl (i32.add (i32.mul (i32.add (local.get $a) (i32.const {i})) (local.get $k)) (i32.add (local.get $b) (i32.const {j}))) (i32.const 3))))
          (f64.store (local.get $q)
            (f64.add (f64.load (local.get $q))
              (f64.add
                (f64.add (f64.promote_f32 (f32x4.extract_lane 0 (local.get $s{i}{j}))) (f64.promote_f32 (f32x4.extract_lane 1 (local.get $s{i}{j}))))
                (f64.add (f64.promote_f32 (f32x4.extract_lane 2 (local.get $s{i}{j}))) (f64.promote_f32 (f32x4.extract_lane 3 (local.get $s{i}{j})))))))
          ;; @end
          ;; @end
          (local.set $b (i32.add (local.get $b) (i32.const 4)))
          (br $components)))
        (local.set $a (i32.add (local.get $a) (i32.const 2)))
        (br $frames)))
      (local.set $p0 (local.get $p1))
      (br $tiles))))
)
