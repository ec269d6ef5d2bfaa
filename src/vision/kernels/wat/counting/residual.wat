;; residual_g<G>(n, z, mean, basis, plane, y, weight, norm, sums): the residual of a frame against
;; the model at every pixel, for G = 1..6 groups of four components (k ≤ 24).
;;
;; Over n pixels (a multiple of 4) of Float32 arrays at byte addresses z (the frame), mean,
;; weight (1/σ²), and the 4G component planes of the basis (plane j at basis + j · `plane`
;; bytes), with the 4G coordinates y (Float32; those past the model's k are 0):
;;   r = (z − μ) − Σ_j y_j B_j,  e = r²,  v = e · w.
;; Stores v at norm (n Float32), adds Σ e and Σ v into sums[0] and sums[1] (Float64, set by the
;; caller): summed in f32 lanes over tiles of 256 pixels (1024 bytes), the tiles added in f64.
;;
;; Repeat markers (scripts/buildKernels.ts): one function per group count G; j runs over the
;; 4G components, unrolled so that every coordinate y_j (splat to the four lanes) and plane
;; offset o_j stays in a local.
(module
  (memory (import "env" "memory") 1)
  ;; @for G in 1..6
  (func (export "residual_g{G}") (param $n i32) (param $z i32) (param $mean i32) (param $basis i32) (param $plane i32) (param $y i32) (param $weight i32) (param $norm i32) (param $sums i32)
    (local $p i32) (local $end i32) (local $tile i32) (local $bp i32)
    (local $r v128) (local $e v128) (local $v v128) (local $ae v128) (local $av v128) (local $se f64) (local $sv f64)
    ;; @for j in 0..4*G-1
    (local $y{j} v128) (local $o{j} i32)
    ;; @end
    ;; @for j in 0..4*G-1
    (local.set $y{j} (v128.load32_splat offset={4*j} (local.get $y)))
    ;; @end
    ;; @for j in 0..4*G-1
    (local.set $o{j} (i32.mul (local.get $plane) (i32.const {j})))
    ;; @end
    (local.set $se (f64.load (local.get $sums)))
    (local.set $sv (f64.load offset=8 (local.get $sums)))
    (local.set $end (i32.shl (local.get $n) (i32.const 2)))
    (local.set $p (i32.const 0))
    (block $tiles_done (loop $tiles
      (br_if $tiles_done (i32.ge_u (local.get $p) (local.get $end)))
      ;; the tile ends 256 pixels on, or at the end
      (local.set $tile (select (local.get $end) (i32.add (local.get $p) (i32.const 1024)) (i32.lt_u (local.get $end) (i32.add (local.get $p) (i32.const 1024)))))
      (local.set $ae (v128.const i32x4 0 0 0 0)) (local.set $av (v128.const i32x4 0 0 0 0))
      (block $pixels_done (loop $pixels
        (br_if $pixels_done (i32.ge_u (local.get $p) (local.get $tile)))
        (local.set $r (f32x4.sub (v128.load (i32.add (local.get $z) (local.get $p))) (v128.load (i32.add (local.get $mean) (local.get $p)))))
        (local.set $bp (i32.add (local.get $basis) (local.get $p)))
        ;; @for j in 0..4*G-1
        (local.set $r (f32x4.sub (local.get $r) (f32x4.mul (v128.load (i32.add (local.get $bp) (local.get $o{j}))) (local.get $y{j}))))
        ;; @end
        (local.set $e (f32x4.mul (local.get $r) (local.get $r)))
        (local.set $v (f32x4.mul (local.get $e) (v128.load (i32.add (local.get $weight) (local.get $p)))))
        (v128.store (i32.add (local.get $norm) (local.get $p)) (local.get $v))
        (local.set $ae (f32x4.add (local.get $ae) (local.get $e)))
        (local.set $av (f32x4.add (local.get $av) (local.get $v)))
        (local.set $p (i32.add (local.get $p) (i32.const 16)))
        (br $pixels)))
      ;; the tile's lane sums, (l0 + l1) + (l2 + l3), added in f64
      (local.set $se (f64.add (local.get $se)
        (f64.add
          (f64.add (f64.promote_f32 (f32x4.extract_lane 0 (local.get $ae))) (f64.promote_f32 (f32x4.extract_lane 1 (local.get $ae))))
          (f64.add (f64.promote_f32 (f32x4.extract_lane 2 (local.get $ae))) (f64.promote_f32 (f32x4.extract_lane 3 (local.get $ae)))))))
      (local.set $sv (f64.add (local.get $sv)
        (f64.add
          (f64.add (f64.promote_f32 (f32x4.extract_lane 0 (local.get $av))) (f64.promote_f32 (f32x4.extract_lane 1 (local.get $av))))
          (f64.add (f64.promote_f32 (f32x4.extract_lane 2 (local.get $av))) (f64.promote_f32 (f32x4.extract_lane 3 (local.get $av)))))))
      (br $tiles)))
    (f64.store (local.get $sums) (local.get $se))
    (f64.store offset=8 (local.get $sums) (local.get $sv)))
  ;; @end
)
