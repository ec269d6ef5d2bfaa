;; gather(src, index, n, dst): dst[s] = src[index[s]] for s < n (Float32 values, i32 indices).
(module
  (memory (import "env" "memory") 1)
  (func (export "gather") (param $src i32) (param $index i32) (param $n i32) (param $dst i32)
    (local $s i32) (local $end i32)
    (local.set $end (i32.shl (local.get $n) (i32.const 2)))
    ;; s: byte offset into index and dst
    (block $values_done (loop $values
      (br_if $values_done (i32.ge_u (local.get $s) (local.get $end)))
      (f32.store (i32.add (local.get $dst) (local.get $s))
        (f32.load (i32.add (local.get $src) (i32.shl (i32.load (i32.add (local.get $index) (local.get $s))) (i32.const 2)))))
      (local.set $s (i32.add (local.get $s) (i32.const 4)))
      (br $values))))
)
