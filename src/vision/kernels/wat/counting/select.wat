;; select(values, n, kth, hist, out, result): the first half of an exact selection of the kth
;; smallest (0-based) of n non-negative Float32 values, by their bit patterns (which order as the
;; values do for non-negative floats; a radix selection).
;;
;; A histogram of the top 12 bits (sign, exponent, 3 bits of mantissa: 4096 bins, SELECT_BINS in
;; src/vision/countingKernels.ts) into hist (4096 i32, cleared here), the bin that holds the kth
;; smallest, and that bin's values copied to out in their order. Writes the number of values in
;; that bin to result[0] and the rank of the kth smallest among them to result[1] (i32);
;; selecting that rank among out[0 … result[0]) gives the kth smallest of all n.
(module
  (memory (import "env" "memory") 1)
  (func (export "select") (param $values i32) (param $n i32) (param $kth i32) (param $hist i32) (param $out i32) (param $result i32)
    (local $s i32) (local $end i32) (local $b i32) (local $at i32) (local $cum i32) (local $c i32) (local $m i32) (local $x i32)
    ;; hist = 0 (4096 bins, 16384 bytes)
    (local.set $s (i32.const 0))
    (block $clear_done (loop $clear
      (br_if $clear_done (i32.ge_u (local.get $s) (i32.const 16384)))
      (v128.store (i32.add (local.get $hist) (local.get $s)) (v128.const i32x4 0 0 0 0))
      (local.set $s (i32.add (local.get $s) (i32.const 16)))
      (br $clear)))
    ;; hist[bits >> 20] += 1 for every value
    (local.set $end (i32.shl (local.get $n) (i32.const 2)))
    (local.set $s (i32.const 0))
    (block $count_done (loop $count
      (br_if $count_done (i32.ge_u (local.get $s) (local.get $end)))
      (local.set $at (i32.add (local.get $hist) (i32.shl (i32.shr_u (i32.load (i32.add (local.get $values) (local.get $s))) (i32.const 20)) (i32.const 2))))
      (i32.store (local.get $at) (i32.add (i32.load (local.get $at)) (i32.const 1)))
      (local.set $s (i32.add (local.get $s) (i32.const 4)))
      (br $count)))
    ;; b: the first bin whose cumulative count passes kth; cum: the count before it
    (local.set $b (i32.const 0))
    (block $found (loop $scan
      (local.set $c (i32.load (i32.add (local.get $hist) (i32.shl (local.get $b) (i32.const 2)))))
      (br_if $found (i32.gt_u (i32.add (local.get $cum) (local.get $c)) (local.get $kth)))
      (local.set $cum (i32.add (local.get $cum) (local.get $c)))
      (local.set $b (i32.add (local.get $b) (i32.const 1)))
      (br_if $scan (i32.lt_u (local.get $b) (i32.const 4096)))))
    ;; out: the values of bin b, m of them
    (local.set $s (i32.const 0))
    (block $collect_done (loop $collect
      (br_if $collect_done (i32.ge_u (local.get $s) (local.get $end)))
      (local.set $x (i32.load (i32.add (local.get $values) (local.get $s))))
      (if (i32.eq (i32.shr_u (local.get $x) (i32.const 20)) (local.get $b)) (then
        (i32.store (i32.add (local.get $out) (i32.shl (local.get $m) (i32.const 2))) (local.get $x))
        (local.set $m (i32.add (local.get $m) (i32.const 1)))))
      (local.set $s (i32.add (local.get $s) (i32.const 4)))
      (br $collect)))
    (i32.store (local.get $result) (local.get $m))
    (i32.store offset=4 (local.get $result) (i32.sub (local.get $kth) (local.get $cum))))
)
