;; pad(src, width, rows, stride, dst): copies `rows` rows of `width` Float32 values, one after the
;; other at src, to rows `stride` values apart at dst (the values past the width are not
;; touched): four values per instruction, then the rest of the row one by one.
(module
  (memory (import "env" "memory") 1)
  (func (export "pad") (param $src i32) (param $width i32) (param $rows i32) (param $stride i32) (param $dst i32)
    (local $y i32) (local $x i32) (local $bulk i32) (local $rowBytes i32) (local $from i32) (local $to i32)
    (local.set $rowBytes (i32.shl (local.get $width) (i32.const 2)))
    ;; bulk: the row's bytes in whole vectors
    (local.set $bulk (i32.and (local.get $rowBytes) (i32.const -16)))
    (block $rows_done (loop $rows
      (br_if $rows_done (i32.ge_u (local.get $y) (local.get $rows)))
      (local.set $from (i32.add (local.get $src) (i32.mul (local.get $y) (local.get $rowBytes))))
      (local.set $to (i32.add (local.get $dst) (i32.shl (i32.mul (local.get $y) (local.get $stride)) (i32.const 2))))
      (local.set $x (i32.const 0))
      (block $vectors_done (loop $vectors
        (br_if $vectors_done (i32.ge_u (local.get $x) (local.get $bulk)))
        (v128.store (i32.add (local.get $to) (local.get $x)) (v128.load (i32.add (local.get $from) (local.get $x))))
        (local.set $x (i32.add (local.get $x) (i32.const 16)))
        (br $vectors)))
      (block $rest_done (loop $rest
        (br_if $rest_done (i32.ge_u (local.get $x) (local.get $rowBytes)))
        (f32.store (i32.add (local.get $to) (local.get $x)) (f32.load (i32.add (local.get $from) (local.get $x))))
        (local.set $x (i32.add (local.get $x) (i32.const 4)))
        (br $rest)))
      (local.set $y (i32.add (local.get $y) (i32.const 1)))
      (br $rows))))
)
