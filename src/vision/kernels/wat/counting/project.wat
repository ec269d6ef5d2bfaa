;; project_g<G>(n, z, mean, basis, plane, out): the projection of a frame onto the component
;; planes, for G = 1..6 groups of four components.
;;
;; out[j] = Σ_i B_j[i] (z_i − μ_i) for the 4G component planes, over n pixels (a multiple of 4)
;; laid out as in residual.wat; the products summed in f32 lanes over tiles of 256 pixels, the
;; tiles added in f64 (in the locals $s<j>, which start at 0) and stored to out (4G Float64).
;;
;; Repeat markers (scripts/buildKernels.ts): one function per group count G; j runs over the
;; 4G components, each with its accumulator a_j, plane offset o_j and f64 sum s_j in locals.
(module
  (memory (import "env" "memory") 1)
  ;; @for G in 1..6
  (func (export "project_g{G}") (param $n i32) (param $z i32) (param $mean i32) (param $basis i32) (param $plane i32) (param $out i32)
    (local $p i32) (local $end i32) (local $tile i32) (local $bp i32) (local $c v128)
    ;; @for j in 0..4*G-1
    (local $a{j} v128) (local $o{j} i32) (local $s{j} f64)
    ;; @end
    ;; @for j in 0..4*G-1
    (local.set $o{j} (i32.mul (local.get $plane) (i32.const {j})))
    ;; @end
    (local.set $end (i32.shl (local.get $n) (i32.const 2)))
    (local.set $p (i32.const 0))
    (block $tiles_done (loop $tiles
      (br_if $tiles_done (i32.ge_u (local.get $p) (local.get $end)))
      ;; the tile ends 256 pixels on, or at the end
      (local.set $tile (select (local.get $end) (i32.add (local.get $p) (i32.const 1024)) (i32.lt_u (local.get $end) (i32.add (local.get $p) (i32.const 1024)))))
      ;; @for j in 0..4*G-1
      (local.set $a{j} (v128.const i32x4 0 0 0 0))
      ;; @end
      (block $pixels_done (loop $pixels
        (br_if $pixels_done (i32.ge_u (local.get $p) (local.get $tile)))
        (local.set $c (f32x4.sub (v128.load (i32.add (local.get $z) (local.get $p))) (v128.load (i32.add (local.get $mean) (local.get $p)))))
        (local.set $bp (i32.add (local.get $basis) (local.get $p)))
        ;; @for j in 0..4*G-1
        (local.set $a{j} (f32x4.add (local.get $a{j}) (f32x4.mul (v128.load (i32.add (local.get $bp) (local.get $o{j}))) (local.get $c))))
        ;; @end
        (local.set $p (i32.add (local.get $p) (i32.const 16)))
        (br $pixels)))
      ;; the tile's lane sums, (l0 + l1) + (l2 + l3), added in f64
      ;; @for j in 0..4*G-1
      (local.set $s{j} (f64.add (local.get $s{j})
        (f64.add
          (f64.add (f64.promote_f32 (f32x4.extract_lane 0 (local.get $a{j}))) (f64.promote_f32 (f32x4.extract_lane 1 (local.get $a{j}))))
          (f64.add (f64.promote_f32 (f32x4.extract_lane 2 (local.get $a{j}))) (f64.promote_f32 (f32x4.extract_lane 3 (local.get $a{j})))))))
      ;; @end
      (br $tiles)))
    ;; @for j in 0..4*G-1
    (f64.store offset={8*j} (local.get $out) (local.get $s{j}))
    ;; @end
  )
  ;; @end
)
