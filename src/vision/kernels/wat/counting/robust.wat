;; robust_g<G>(n, z, mean, basis, plane, y, weight, limit, left, acc, outer, rhs) → count: one
;; robust step's left-out pixels and the change of their sums, in the same pass that finds them,
;; for G = 1..6 groups of four components (K = 4G below).
;;
;; Over n pixels laid out as in residual.wat: r and v = r² · w as there; a pixel is left out when
;; its v is not ≤ limit (NaN included). `left` (n i32, all bits set for a pixel left out) holds
;; the previous step's left-out set on entry (all 0 before the first step) and this step's on
;; return. For every pixel that joined the set (w = +1) or left it (w = −1), with c = z − μ and
;; b its K basis values, adds w · b_p · b_q into outer[q · K + p] for p ≤ q and w · b_p · c into
;; rhs[p] (Float64, kept by the caller from step to step): so outer and rhs are always the sums
;; over the current set, at the cost of the pixels that changed. Returns the size of the set.
;;
;; The products are summed in f32 lanes over tiles of 256 pixels in `acc` (work memory, zeroed
;; here: K(K + 1)/2 vectors for the pairs p ≤ q, the pair (p, q) in slot q(q + 1)/2 + p, then
;; K vectors for rhs) and added into the f64 sums after each tile that had any.
;;
;; Repeat markers (scripts/buildKernels.ts): one function per group count G; j, p and q run
;; over the K = 4G components, unrolled so that y_j, o_j and the pixel's basis values b_j stay
;; in locals.
(module
  (memory (import "env" "memory") 1)
  ;; @for G in 1..6
  (func (export "robust_g{G}") (param $n i32) (param $z i32) (param $mean i32) (param $basis i32) (param $plane i32) (param $y i32) (param $weight i32) (param $limit f32) (param $left i32) (param $acc i32) (param $outer i32) (param $rhs i32) (result i32)
    (local $p i32) (local $end i32) (local $tile i32) (local $count i32) (local $any i32) (local $bp i32) (local $slot i32)
    (local $c v128) (local $r v128) (local $v v128) (local $bad v128) (local $lim v128) (local $t v128) (local $was v128) (local $w v128)
    ;; @for j in 0..4*G-1
    (local $y{j} v128) (local $o{j} i32) (local $b{j} v128)
    ;; @end
    ;; @for j in 0..4*G-1
    (local.set $y{j} (v128.load32_splat offset={4*j} (local.get $y)))
    ;; @end
    ;; @for j in 0..4*G-1
    (local.set $o{j} (i32.mul (local.get $plane) (i32.const {j})))
    ;; @end
    (local.set $lim (f32x4.splat (local.get $limit)))
    ;; acc = 0: K(K + 1)/2 + K vectors
    (local.set $slot (i32.const 0))
    (block $clear_done (loop $clear
      (br_if $clear_done (i32.ge_u (local.get $slot) (i32.const {16*(4*G*(4*G+1)/2+4*G)})))
      (v128.store (i32.add (local.get $acc) (local.get $slot)) (v128.const i32x4 0 0 0 0))
      (local.set $slot (i32.add (local.get $slot) (i32.const 16)))
      (br $clear)))
    (local.set $end (i32.shl (local.get $n) (i32.const 2)))
    (local.set $p (i32.const 0))
    (block $tiles_done (loop $tiles
      (br_if $tiles_done (i32.ge_u (local.get $p) (local.get $end)))
      ;; the tile ends 256 pixels on, or at the end
      (local.set $tile (select (local.get $end) (i32.add (local.get $p) (i32.const 1024)) (i32.lt_u (local.get $end) (i32.add (local.get $p) (i32.const 1024)))))
      (local.set $any (i32.const 0))
      (block $pixels_done (loop $pixels
        (br_if $pixels_done (i32.ge_u (local.get $p) (local.get $tile)))
        (local.set $c (f32x4.sub (v128.load (i32.add (local.get $z) (local.get $p))) (v128.load (i32.add (local.get $mean) (local.get $p)))))
        (local.set $bp (i32.add (local.get $basis) (local.get $p)))
        ;; @for j in 0..4*G-1
        (local.set $b{j} (v128.load (i32.add (local.get $bp) (local.get $o{j}))))
        ;; @end
        (local.set $r (local.get $c))
        ;; @for j in 0..4*G-1
        (local.set $r (f32x4.sub (local.get $r) (f32x4.mul (local.get $b{j}) (local.get $y{j}))))
        ;; @end
        (local.set $v (f32x4.mul (f32x4.mul (local.get $r) (local.get $r)) (v128.load (i32.add (local.get $weight) (local.get $p)))))
        (local.set $bad (v128.not (f32x4.le (local.get $v) (local.get $lim))))
        (local.set $count (i32.add (local.get $count) (i32.popcnt (i32x4.bitmask (local.get $bad)))))
        (local.set $was (v128.load (i32.add (local.get $left) (local.get $p))))
        (v128.store (i32.add (local.get $left) (local.get $p)) (local.get $bad))
        (if (v128.any_true (v128.xor (local.get $bad) (local.get $was))) (then
          (local.set $any (i32.const 1))
          ;; w = +1 where the pixel joined, −1 where it left, 0 where it stayed (the +0.0 bit pattern)
          (local.set $w (v128.and (v128.bitselect (v128.const f32x4 1 1 1 1) (v128.const f32x4 -1 -1 -1 -1) (local.get $bad)) (v128.xor (local.get $bad) (local.get $was))))
          (local.set $c (f32x4.mul (local.get $c) (local.get $w)))
          ;; acc[pair (p, q)] += w · b_p · b_q
          ;; @for q in 0..4*G-1
          ;; @for p in 0..q
          (v128.store (i32.add (local.get $acc) (i32.const {16*(q*(q+1)/2+p)})) (f32x4.add (v128.load (i32.add (local.get $acc) (i32.const {16*(q*(q+1)/2+p)}))) (f32x4.mul (f32x4.mul (local.get $b{p}) (local.get $w)) (local.get $b{q}))))
          ;; @end
          ;; @end
          ;; acc[rhs p] += b_p · w · c
          ;; @for p in 0..4*G-1
          (v128.store (i32.add (local.get $acc) (i32.const {16*(4*G*(4*G+1)/2+p)})) (f32x4.add (v128.load (i32.add (local.get $acc) (i32.const {16*(4*G*(4*G+1)/2+p)}))) (f32x4.mul (local.get $b{p}) (local.get $c))))
          ;; @end
        ))
        (local.set $p (i32.add (local.get $p) (i32.const 16)))
        (br $pixels)))
      ;; after a tile with changes: each slot's lane sum, (l0 + l1) + (l2 + l3), added in f64
      ;; into outer[q · K + p] (pairs) or rhs[p], and the slot cleared
      (if (local.get $any) (then
        ;; @for q in 0..4*G-1
        ;; @for p in 0..q
        (local.set $t (v128.load (i32.add (local.get $acc) (i32.const {16*(q*(q+1)/2+p)}))))
        (f64.store (i32.add (local.get $outer) (i32.const {8*(q*4*G+p)}))
          (f64.add (f64.load (i32.add (local.get $outer) (i32.const {8*(q*4*G+p)})))
            (f64.add
              (f64.add (f64.promote_f32 (f32x4.extract_lane 0 (local.get $t))) (f64.promote_f32 (f32x4.extract_lane 1 (local.get $t))))
              (f64.add (f64.promote_f32 (f32x4.extract_lane 2 (local.get $t))) (f64.promote_f32 (f32x4.extract_lane 3 (local.get $t)))))))
        (v128.store (i32.add (local.get $acc) (i32.const {16*(q*(q+1)/2+p)})) (v128.const i32x4 0 0 0 0))
        ;; @end
        ;; @end
        ;; @for p in 0..4*G-1
        (local.set $t (v128.load (i32.add (local.get $acc) (i32.const {16*(4*G*(4*G+1)/2+p)}))))
        (f64.store (i32.add (local.get $rhs) (i32.const {8*p}))
          (f64.add (f64.load (i32.add (local.get $rhs) (i32.const {8*p})))
            (f64.add
              (f64.add (f64.promote_f32 (f32x4.extract_lane 0 (local.get $t))) (f64.promote_f32 (f32x4.extract_lane 1 (local.get $t))))
              (f64.add (f64.promote_f32 (f32x4.extract_lane 2 (local.get $t))) (f64.promote_f32 (f32x4.extract_lane 3 (local.get $t)))))))
        (v128.store (i32.add (local.get $acc) (i32.const {16*(4*G*(4*G+1)/2+p)})) (v128.const i32x4 0 0 0 0))
        ;; @end
      ))
      (br $tiles)))
    (local.get $count))
  ;; @end
)
