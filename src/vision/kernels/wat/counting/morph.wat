;; morph(src, dst, tmp, rows, rowBytes, vectors, words, keep, radius, erode): one erosion
;; (erode ≠ 0) or dilation of a packed mask by the (2 · radius + 1)² square, radius 1..31, as
;; src/vision/morphologyBits.ts does it (a row pass of shifts, then a column pass; van den
;; Boomgaard & van Balen 1992), four words per instruction.
;;
;; Layout of src, dst and tmp: `rows` rows of rowBytes bytes from their address; each row's
;; `vectors` × 4 words hold its `words` words of pixels (bit x mod 32 of word ⌊x/32⌋), and the
;; 4 words before a row's address (the end of the previous row, for row 0 memory reserved by the
;; caller) and after its last vector are guards, as are 4 words after the last row. This sets
;; the guards, the words past `words` and the bits of the last word not in `keep` to the step's
;; outside value (set for an erosion, unset for a dilation), so the border is opencv's default.
;; dst gets the result (its guards are not set); tmp is work memory.
;;
;; The two branches are the same passes with the erosion's v128.and and all-ones outside value,
;; or the dilation's v128.or and zero outside value.
(module
  (memory (import "env" "memory") 1)
  (func (export "morph") (param $src i32) (param $dst i32) (param $tmp i32) (param $rows i32) (param $rowBytes i32) (param $vectors i32) (param $words i32) (param $keep i32) (param $radius i32) (param $erode i32)
    (local $y i32) (local $row i32) (local $w i32) (local $q i32) (local $off i32) (local $end i32) (local $s i32) (local $t i32) (local $t0 i32) (local $t1 i32) (local $v i32)
    (local $a v128) (local $left v128) (local $right v128) (local $acc v128)
    (if (local.get $erode)
    (then
      ;; erosion: a pixel stays set when every pixel of its square is set
      ;; guards, the words past the row end, and the row end's padding bits: set to all ones
      (local.set $y (i32.const 0))
      (block $guards_erode_done (loop $guards_erode
        (br_if $guards_erode_done (i32.gt_u (local.get $y) (local.get $rows)))
        (local.set $row (i32.add (local.get $src) (i32.mul (local.get $y) (local.get $rowBytes))))
        (v128.store (i32.sub (local.get $row) (i32.const 16)) (v128.const i32x4 -1 -1 -1 -1))
        (if (i32.lt_u (local.get $y) (local.get $rows)) (then
          (local.set $w (local.get $words))
          (block $extra_erode_done (loop $extra_erode
            (br_if $extra_erode_done (i32.ge_u (local.get $w) (i32.shl (local.get $vectors) (i32.const 2))))
            (i32.store (i32.add (local.get $row) (i32.shl (local.get $w) (i32.const 2))) (i32x4.extract_lane 0 (v128.const i32x4 -1 -1 -1 -1)))
            (local.set $w (i32.add (local.get $w) (i32.const 1)))
            (br $extra_erode)))
          ;; the last word: its bits in keep, the others the outside value
          (local.set $q (i32.add (local.get $row) (i32.shl (i32.sub (local.get $words) (i32.const 1)) (i32.const 2))))
          (i32.store (local.get $q) (i32.or (i32.and (i32.load (local.get $q)) (local.get $keep)) (i32.and (i32x4.extract_lane 0 (v128.const i32x4 -1 -1 -1 -1)) (i32.xor (local.get $keep) (i32.const -1)))))))
        (local.set $y (i32.add (local.get $y) (i32.const 1)))
        (br $guards_erode)))
      ;; rows: each word with its neighbours shifted by 1..radius pixels either way, into tmp
      (local.set $y (i32.const 0))
      (block $rows_erode_done (loop $rows_erode
        (br_if $rows_erode_done (i32.ge_u (local.get $y) (local.get $rows)))
        (local.set $off (i32.mul (local.get $y) (local.get $rowBytes)))
        (local.set $end (i32.add (local.get $off) (i32.shl (local.get $vectors) (i32.const 4))))
        (block $row_vectors_erode_done (loop $row_vectors_erode
          (br_if $row_vectors_erode_done (i32.ge_u (local.get $off) (local.get $end)))
          (local.set $q (i32.add (local.get $src) (local.get $off)))
          ;; a: four words; right, left: the four words one word on either side
          (local.set $a (v128.load (local.get $q)))
          (local.set $right (v128.load (i32.add (local.get $q) (i32.const 4))))
          (local.set $left (v128.load (i32.sub (local.get $q) (i32.const 4))))
          (local.set $acc (local.get $a))
          (local.set $s (i32.const 1))
          (block $shifts_erode_done (loop $shifts_erode
            (br_if $shifts_erode_done (i32.gt_u (local.get $s) (local.get $radius)))
            ;; the pixels s to the right (higher bits), then s to the left
            (local.set $acc (v128.and (local.get $acc) (v128.or (i32x4.shr_u (local.get $a) (local.get $s)) (i32x4.shl (local.get $right) (i32.sub (i32.const 32) (local.get $s))))))
            (local.set $acc (v128.and (local.get $acc) (v128.or (i32x4.shl (local.get $a) (local.get $s)) (i32x4.shr_u (local.get $left) (i32.sub (i32.const 32) (local.get $s))))))
            (local.set $s (i32.add (local.get $s) (i32.const 1)))
            (br $shifts_erode)))
          (v128.store (i32.add (local.get $tmp) (local.get $off)) (local.get $acc))
          (local.set $off (i32.add (local.get $off) (i32.const 16)))
          (br $row_vectors_erode)))
        (local.set $y (i32.add (local.get $y) (i32.const 1)))
        (br $rows_erode)))
      ;; columns: rows y − radius … y + radius inside the image, from tmp into dst
      (local.set $y (i32.const 0))
      (block $columns_erode_done (loop $columns_erode
        (br_if $columns_erode_done (i32.ge_u (local.get $y) (local.get $rows)))
        (local.set $t0 (select (i32.sub (local.get $y) (local.get $radius)) (i32.const 0) (i32.ge_s (i32.sub (local.get $y) (local.get $radius)) (i32.const 0))))
        (local.set $t1 (select (i32.add (local.get $y) (local.get $radius)) (i32.sub (local.get $rows) (i32.const 1)) (i32.lt_s (i32.add (local.get $y) (local.get $radius)) (local.get $rows))))
        (local.set $v (i32.const 0))
        (block $column_vectors_erode_done (loop $column_vectors_erode
          (br_if $column_vectors_erode_done (i32.ge_u (local.get $v) (i32.shl (local.get $vectors) (i32.const 4))))
          (local.set $acc (v128.const i32x4 -1 -1 -1 -1))
          (local.set $q (i32.add (i32.add (local.get $tmp) (i32.mul (local.get $t0) (local.get $rowBytes))) (local.get $v)))
          (local.set $t (local.get $t0))
          (block $column_rows_erode_done (loop $column_rows_erode
            (br_if $column_rows_erode_done (i32.gt_s (local.get $t) (local.get $t1)))
            (local.set $acc (v128.and (local.get $acc) (v128.load (local.get $q))))
            (local.set $q (i32.add (local.get $q) (local.get $rowBytes)))
            (local.set $t (i32.add (local.get $t) (i32.const 1)))
            (br $column_rows_erode)))
          (v128.store (i32.add (i32.add (local.get $dst) (i32.mul (local.get $y) (local.get $rowBytes))) (local.get $v)) (local.get $acc))
          (local.set $v (i32.add (local.get $v) (i32.const 16)))
          (br $column_vectors_erode)))
        (local.set $y (i32.add (local.get $y) (i32.const 1)))
        (br $columns_erode)))
    )
    (else
      ;; dilation: a pixel is set when any pixel of its square is set
      ;; guards, the words past the row end, and the row end's padding bits: set to zero
      (local.set $y (i32.const 0))
      (block $guards_dilate_done (loop $guards_dilate
        (br_if $guards_dilate_done (i32.gt_u (local.get $y) (local.get $rows)))
        (local.set $row (i32.add (local.get $src) (i32.mul (local.get $y) (local.get $rowBytes))))
        (v128.store (i32.sub (local.get $row) (i32.const 16)) (v128.const i32x4 0 0 0 0))
        (if (i32.lt_u (local.get $y) (local.get $rows)) (then
          (local.set $w (local.get $words))
          (block $extra_dilate_done (loop $extra_dilate
            (br_if $extra_dilate_done (i32.ge_u (local.get $w) (i32.shl (local.get $vectors) (i32.const 2))))
            (i32.store (i32.add (local.get $row) (i32.shl (local.get $w) (i32.const 2))) (i32x4.extract_lane 0 (v128.const i32x4 0 0 0 0)))
            (local.set $w (i32.add (local.get $w) (i32.const 1)))
            (br $extra_dilate)))
          ;; the last word: its bits in keep, the others the outside value
          (local.set $q (i32.add (local.get $row) (i32.shl (i32.sub (local.get $words) (i32.const 1)) (i32.const 2))))
          (i32.store (local.get $q) (i32.or (i32.and (i32.load (local.get $q)) (local.get $keep)) (i32.and (i32x4.extract_lane 0 (v128.const i32x4 0 0 0 0)) (i32.xor (local.get $keep) (i32.const -1)))))))
        (local.set $y (i32.add (local.get $y) (i32.const 1)))
        (br $guards_dilate)))
      ;; rows: each word with its neighbours shifted by 1..radius pixels either way, into tmp
      (local.set $y (i32.const 0))
      (block $rows_dilate_done (loop $rows_dilate
        (br_if $rows_dilate_done (i32.ge_u (local.get $y) (local.get $rows)))
        (local.set $off (i32.mul (local.get $y) (local.get $rowBytes)))
        (local.set $end (i32.add (local.get $off) (i32.shl (local.get $vectors) (i32.const 4))))
        (block $row_vectors_dilate_done (loop $row_vectors_dilate
          (br_if $row_vectors_dilate_done (i32.ge_u (local.get $off) (local.get $end)))
          (local.set $q (i32.add (local.get $src) (local.get $off)))
          ;; a: four words; right, left: the four words one word on either side
          (local.set $a (v128.load (local.get $q)))
          (local.set $right (v128.load (i32.add (local.get $q) (i32.const 4))))
          (local.set $left (v128.load (i32.sub (local.get $q) (i32.const 4))))
          (local.set $acc (local.get $a))
          (local.set $s (i32.const 1))
          (block $shifts_dilate_done (loop $shifts_dilate
            (br_if $shifts_dilate_done (i32.gt_u (local.get $s) (local.get $radius)))
            ;; the pixels s to the right (higher bits), then s to the left
            (local.set $acc (v128.or (local.get $acc) (v128.or (i32x4.shr_u (local.get $a) (local.get $s)) (i32x4.shl (local.get $right) (i32.sub (i32.const 32) (local.get $s))))))
            (local.set $acc (v128.or (local.get $acc) (v128.or (i32x4.shl (local.get $a) (local.get $s)) (i32x4.shr_u (local.get $left) (i32.sub (i32.const 32) (local.get $s))))))
            (local.set $s (i32.add (local.get $s) (i32.const 1)))
            (br $shifts_dilate)))
          (v128.store (i32.add (local.get $tmp) (local.get $off)) (local.get $acc))
          (local.set $off (i32.add (local.get $off) (i32.const 16)))
          (br $row_vectors_dilate)))
        (local.set $y (i32.add (local.get $y) (i32.const 1)))
        (br $rows_dilate)))
      ;; columns: rows y − radius … y + radius inside the image, from tmp into dst
      (local.set $y (i32.const 0))
      (block $columns_dilate_done (loop $columns_dilate
        (br_if $columns_dilate_done (i32.ge_u (local.get $y) (local.get $rows)))
        (local.set $t0 (select (i32.sub (local.get $y) (local.get $radius)) (i32.const 0) (i32.ge_s (i32.sub (local.get $y) (local.get $radius)) (i32.const 0))))
        (local.set $t1 (select (i32.add (local.get $y) (local.get $radius)) (i32.sub (local.get $rows) (i32.const 1)) (i32.lt_s (i32.add (local.get $y) (local.get $radius)) (local.get $rows))))
        (local.set $v (i32.const 0))
        (block $column_vectors_dilate_done (loop $column_vectors_dilate
          (br_if $column_vectors_dilate_done (i32.ge_u (local.get $v) (i32.shl (local.get $vectors) (i32.const 4))))
          (local.set $acc (v128.const i32x4 0 0 0 0))
          (local.set $q (i32.add (i32.add (local.get $tmp) (i32.mul (local.get $t0) (local.get $rowBytes))) (local.get $v)))
          (local.set $t (local.get $t0))
          (block $column_rows_dilate_done (loop $column_rows_dilate
            (br_if $column_rows_dilate_done (i32.gt_s (local.get $t) (local.get $t1)))
            (local.set $acc (v128.or (local.get $acc) (v128.load (local.get $q))))
            (local.set $q (i32.add (local.get $q) (local.get $rowBytes)))
            (local.set $t (i32.add (local.get $t) (i32.const 1)))
            (br $column_rows_dilate)))
          (v128.store (i32.add (i32.add (local.get $dst) (i32.mul (local.get $y) (local.get $rowBytes))) (local.get $v)) (local.get $acc))
          (local.set $v (i32.add (local.get $v) (i32.const 16)))
          (br $column_vectors_dilate)))
        (local.set $y (i32.add (local.get $y) (i32.const 1)))
        (br $columns_dilate)))
    )))
)
