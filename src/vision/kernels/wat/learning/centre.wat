;; centre(frames, n, d, sums, mean): the per-pixel mean of n frames, subtracted from each.
;;
;; frames: n × d Float32 values, frame-major, d a multiple of 4, at byte address `frames`.
;; sums:   d Float64 of scratch.
;; Writes the per-pixel mean, summed in f64 in frame order and rounded once to f32, to `mean`
;; (d Float32), and subtracts it from every frame in place (f32 subtraction): the same
;; operations, in the same order, as the JS loops of fitSubspace. Each pass runs over the frames
;; in memory order. Byte offsets: p runs over a frame's bytes; the f64 sums of pixels p/4 ..
;; p/4 + 3 are at sums + 2p (two f64x2).
(module
  (memory (import "env" "memory") 1)
  (func (export "centre") (param $frames i32) (param $n i32) (param $d i32) (param $sums i32) (param $mean i32)
    (local $stride i32) (local $p i32) (local $a i32) (local $t i32) (local $x i32) (local $count v128)
    (local.set $stride (i32.shl (local.get $d) (i32.const 2)))
    (local.set $count (f64x2.splat (f64.convert_i32_u (local.get $n))))

    ;; sums = 0
    (local.set $p (i32.const 0))
    (block $clear_done (loop $clear
      (br_if $clear_done (i32.ge_u (local.get $p) (local.get $stride)))
      (v128.store (i32.add (local.get $sums) (i32.shl (local.get $p) (i32.const 1))) (v128.const i32x4 0 0 0 0))
      (v128.store offset=16 (i32.add (local.get $sums) (i32.shl (local.get $p) (i32.const 1))) (v128.const i32x4 0 0 0 0))
      (local.set $p (i32.add (local.get $p) (i32.const 16)))
      (br $clear)))

    ;; sums += frame t, for t = 0 .. n − 1, each f32 lane widened to f64
    (local.set $a (local.get $frames)) (local.set $t (i32.const 0))
    (block $sum_done (loop $sum
      (br_if $sum_done (i32.ge_u (local.get $t) (local.get $n)))
      (local.set $p (i32.const 0))
      (block $sum_pixels_done (loop $sum_pixels
        (br_if $sum_pixels_done (i32.ge_u (local.get $p) (local.get $stride)))
        ;; lanes 0, 1
        (v128.store (i32.add (local.get $sums) (i32.shl (local.get $p) (i32.const 1)))
          (f64x2.add
            (v128.load (i32.add (local.get $sums) (i32.shl (local.get $p) (i32.const 1))))
            (f64x2.promote_low_f32x4 (v128.load (i32.add (local.get $a) (local.get $p))))))
        ;; lanes 2, 3 (moved to 0, 1 by the shuffle)
        (v128.store offset=16 (i32.add (local.get $sums) (i32.shl (local.get $p) (i32.const 1)))
          (f64x2.add
            (v128.load offset=16 (i32.add (local.get $sums) (i32.shl (local.get $p) (i32.const 1))))
            (f64x2.promote_low_f32x4
              (i8x16.shuffle 8 9 10 11 12 13 14 15 8 9 10 11 12 13 14 15
                (v128.load (i32.add (local.get $a) (local.get $p)))
                (v128.load (i32.add (local.get $a) (local.get $p)))))))
        (local.set $p (i32.add (local.get $p) (i32.const 16)))
        (br $sum_pixels)))
      (local.set $a (i32.add (local.get $a) (local.get $stride)))
      (local.set $t (i32.add (local.get $t) (i32.const 1)))
      (br $sum)))

    ;; mean = f32(sums / n), the two f64x2 halves joined into one f32x4
    (local.set $p (i32.const 0))
    (block $divide_done (loop $divide
      (br_if $divide_done (i32.ge_u (local.get $p) (local.get $stride)))
      (v128.store (i32.add (local.get $mean) (local.get $p))
        (i8x16.shuffle 0 1 2 3 4 5 6 7 16 17 18 19 20 21 22 23
          (f32x4.demote_f64x2_zero (f64x2.div (v128.load (i32.add (local.get $sums) (i32.shl (local.get $p) (i32.const 1)))) (local.get $count)))
          (f32x4.demote_f64x2_zero (f64x2.div (v128.load offset=16 (i32.add (local.get $sums) (i32.shl (local.get $p) (i32.const 1)))) (local.get $count)))))
      (local.set $p (i32.add (local.get $p) (i32.const 16)))
      (br $divide)))

    ;; frame t −= mean, in place
    (local.set $a (local.get $frames)) (local.set $t (i32.const 0))
    (block $subtract_done (loop $subtract
      (br_if $subtract_done (i32.ge_u (local.get $t) (local.get $n)))
      (local.set $p (i32.const 0))
      (block $subtract_pixels_done (loop $subtract_pixels
        (br_if $subtract_pixels_done (i32.ge_u (local.get $p) (local.get $stride)))
        (local.set $x (i32.add (local.get $a) (local.get $p)))
        (v128.store (local.get $x) (f32x4.sub (v128.load (local.get $x)) (v128.load (i32.add (local.get $mean) (local.get $p)))))
        (local.set $p (i32.add (local.get $p) (i32.const 16)))
        (br $subtract_pixels)))
      (local.set $a (i32.add (local.get $a) (local.get $stride)))
      (local.set $t (i32.add (local.get $t) (i32.const 1)))
      (br $subtract))))
)
