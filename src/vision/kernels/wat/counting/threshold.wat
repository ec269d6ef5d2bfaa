;; threshold(v, h, stride, rows, words, tn, ts, scale, bits): the 3×3 box mean of the normalised
;; energy against a per-pixel threshold, written as a packed mask.
;;
;; v: `rows` rows of `stride` Float32 values (stride a multiple of 4, at least 32 · words and
;;    greater than the image width, the values past the width 0), with one zero row before and
;;    after and 4 zero values before and after those: so the neighbours of every image pixel are
;;    inside the array and those outside the image are 0.
;; h: a work array of the same shape.
;; First h = the sum of each value and its left and right neighbours, over the guard rows too;
;; then per pixel s = h above + h + h below, the 3×3 sum of the in-image values, and the pixel is
;; set when s > tn · scale and v > ts · scale (tn = t² × the number of in-image pixels of the
;; window, ts = t² × share²; both `rows` × stride without guards, tn = +∞ past the width).
;; Bit x of word y · words + ⌊x/32⌋ of `bits` (i32) is pixel (x, y), least significant bit
;; leftmost: a word is 8 blocks b of four pixels, block b at bits 4b .. 4b + 3.
(module
  (memory (import "env" "memory") 1)
  (func (export "threshold") (param $v i32) (param $h i32) (param $stride i32) (param $rows i32) (param $words i32) (param $tn i32) (param $ts i32) (param $scale f32) (param $bits i32)
    (local $p i32) (local $end i32) (local $rowBytes i32) (local $y i32) (local $w i32) (local $q i32) (local $word i32) (local $sc v128) (local $out i32)
    (local.set $rowBytes (i32.shl (local.get $stride) (i32.const 2)))
    (local.set $sc (f32x4.splat (local.get $scale)))
    ;; h = left + centre + right over the guard row above, the rows and the guard row below
    (local.set $p (i32.sub (i32.const 0) (local.get $rowBytes)))
    (local.set $end (i32.mul (local.get $rowBytes) (i32.add (local.get $rows) (i32.const 1))))
    (block $horizontal_done (loop $horizontal
      (br_if $horizontal_done (i32.ge_s (local.get $p) (local.get $end)))
      (local.set $q (i32.add (local.get $v) (local.get $p)))
      (v128.store (i32.add (local.get $h) (local.get $p))
        (f32x4.add (f32x4.add (v128.load (i32.sub (local.get $q) (i32.const 4))) (v128.load (local.get $q))) (v128.load (i32.add (local.get $q) (i32.const 4)))))
      (local.set $p (i32.add (local.get $p) (i32.const 16)))
      (br $horizontal)))
    (local.set $out (local.get $bits))
    (local.set $y (i32.const 0))
    (block $rows_done (loop $rows
      (br_if $rows_done (i32.ge_u (local.get $y) (local.get $rows)))
      (local.set $p (i32.mul (local.get $y) (local.get $rowBytes)))
      (local.set $w (i32.const 0))
      (block $words_done (loop $words
        (br_if $words_done (i32.ge_u (local.get $w) (local.get $words)))
        (local.set $word (i32.const 0))
        ;; @for b in 0..7
        (local.set $word (i32.or (local.get $word) (i32.shl
          (i32x4.bitmask (v128.and
            ;; s = h above + h + h below > tn · scale
            (f32x4.gt
              (f32x4.add
                (f32x4.add
                  (v128.load offset={16*b} (i32.add (local.get $h) (i32.sub (local.get $p) (local.get $rowBytes))))
                  (v128.load offset={16*b} (i32.add (local.get $h) (local.get $p))))
                (v128.load offset={16*b} (i32.add (local.get $h) (i32.add (local.get $p) (local.get $rowBytes)))))
              (f32x4.mul (v128.load offset={16*b} (i32.add (local.get $tn) (local.get $p))) (local.get $sc)))
            ;; v > ts · scale
            (f32x4.gt
              (v128.load offset={16*b} (i32.add (local.get $v) (local.get $p)))
              (f32x4.mul (v128.load offset={16*b} (i32.add (local.get $ts) (local.get $p))) (local.get $sc)))))
          (i32.const {4*b}))))
        ;; @end
        (i32.store (local.get $out) (local.get $word))
        (local.set $out (i32.add (local.get $out) (i32.const 4)))
        (local.set $p (i32.add (local.get $p) (i32.const 128)))
        (local.set $w (i32.add (local.get $w) (i32.const 1)))
        (br $words)))
      (local.set $y (i32.add (local.get $y) (i32.const 1)))
      (br $rows))))
)
