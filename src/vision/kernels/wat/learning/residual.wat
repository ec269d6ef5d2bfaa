;; residual(rows, m, offset, basis, k, d, coefficients, tile, out): the squared residuals of m
;; frames against an offset and k basis rows, added per pixel.
;;
;; rows, offset, basis: as in project.wat (m any count).
;; coefficients:        m × k Float32, frame-major.
;; out:                 d Float64, zeroed by the caller.
;; For each frame, r = frame − offset − Σ_j coefficients[t, j] · basis[j] (four pixels per
;; instruction, four components at a time), and r² is added into out, summed in f32 lanes over
;; `tile` frames at a time and the tile sums added in f64.
(module
  (memory (import "env" "memory") 1)
  (func (export "residual") (param $rows i32) (param $m i32) (param $offset i32) (param $basis i32) (param $k i32) (param $d i32) (param $coefficients i32) (param $tile i32) (param $out i32)
    (local $stride i32) (local $p i32) (local $t0 i32) (local $t1 i32) (local $t i32) (local $j i32) (local $y i32) (local $u i32) (local $o i32)
    (local $c v128) (local $r v128) (local $acc v128)
    ;; $row<j>: the byte offset of basis row j from row 0
    (local $row0 i32) (local $row1 i32) (local $row2 i32) (local $row3 i32) (local $row4 i32)
    (local.set $stride (i32.shl (local.get $d) (i32.const 2)))
    ;; @for j in 0..4
    (local.set $row{j} (i32.mul (local.get $stride) (i32.const {j})))
    ;; @end
    ;; pixels p/4 .. p/4 + 3
    (local.set $p (i32.const 0))
    (block $chunks_done (loop $chunks
      (br_if $chunks_done (i32.ge_u (local.get $p) (local.get $stride)))
      (local.set $c (v128.load (i32.add (local.get $offset) (local.get $p))))
      ;; frame tiles [t0, t1)
      (local.set $t0 (i32.const 0))
      (block $tiles_done (loop $tiles
        (br_if $tiles_done (i32.ge_u (local.get $t0) (local.get $m)))
        (local.set $t1 (select (local.get $m) (i32.add (local.get $t0) (local.get $tile)) (i32.lt_u (local.get $m) (i32.add (local.get $t0) (local.get $tile)))))
        (local.set $acc (v128.const i32x4 0 0 0 0))
        (local.set $t (local.get $t0))
        (block $frames_done (loop $frames
          (br_if $frames_done (i32.ge_u (local.get $t) (local.get $t1)))
          (local.set $r (f32x4.sub (v128.load (i32.add (i32.load (i32.add (local.get $rows) (i32.shl (local.get $t) (i32.const 2)))) (local.get $p))) (local.get $c)))
          ;; y: the frame's coefficients; u: this pixel vector in basis row j
          (local.set $y (i32.add (local.get $coefficients) (i32.shl (i32.mul (local.get $t) (local.get $k)) (i32.const 2))))
          (local.set $u (i32.add (local.get $basis) (local.get $p)))
          (local.set $j (i32.const 0))
          (block $components_done (loop $components
            (br_if $components_done (i32.ge_u (local.get $j) (local.get $k)))
            ;; @for j in 0..3
            (local.set $r (f32x4.sub (local.get $r) (f32x4.mul (v128.load32_splat offset={4*j} (local.get $y)) (v128.load (i32.add (local.get $u) (local.get $row{j}))))))
            ;; @end
            (local.set $y (i32.add (local.get $y) (i32.const 16)))
            (local.set $u (i32.add (local.get $u) (local.get $row4)))
            (local.set $j (i32.add (local.get $j) (i32.const 4)))
            (br $components)))
          (local.set $acc (f32x4.add (local.get $acc) (f32x4.mul (local.get $r) (local.get $r))))
          (local.set $t (i32.add (local.get $t) (i32.const 1)))
          (br $frames)))
        ;; out[p/4 ..] += acc, each f32 lane widened to f64
        (local.set $o (i32.add (local.get $out) (i32.shl (local.get $p) (i32.const 1))))
        (v128.store (local.get $o) (f64x2.add (v128.load (local.get $o)) (f64x2.promote_low_f32x4 (local.get $acc))))
        (v128.store offset=16 (local.get $o) (f64x2.add (v128.load offset=16 (local.get $o))
          (f64x2.promote_low_f32x4 (i8x16.shuffle 8 9 10 11 12 13 14 15 8 9 10 11 12 13 14 15 (local.get $acc) (local.get $acc)))))
        (local.set $t0 (local.get $t1))
        (br $tiles)))
      (local.set $p (i32.add (local.get $p) (i32.const 16)))
      (br $chunks))))
)
