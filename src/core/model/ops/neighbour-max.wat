;; The EdgeConv layer's neighbour max for inference, four channels at a time (WebAssembly SIMD):
;;   out[p][c] = max over m < k of v[nb[p][m]][c]
;; v: (rows, W) float32, nb: (P, k) int32 row numbers, out: (P, W) float32, all at byte offsets in memory; W a
;; multiple of 4. f32x4.pmax(a, b) is "a < b ? b : a", the JS loop's "if (b > a) a = b" lane by lane (the same
;; answer for NaN and for -0 against +0), so the result is bit for bit the JS one.
;; Built into neighbour-max-wasm.ts by `npm run build:wasm` (scripts/build-wasm.ts); a test checks they agree.
(module
  (memory (export "memory") 1)
  (func (export "neighbourMax")
    (param $v i32) (param $nb i32) (param $out i32) (param $P i32) (param $W i32) (param $k i32)
    (local $p i32) (local $m i32) (local $c i32) (local $row i32) (local $dst i32) (local $nbp i32) (local $wb i32)
    (local.set $wb (i32.shl (local.get $W) (i32.const 2)))
    (block $pdone
      (loop $ploop
        (br_if $pdone (i32.ge_u (local.get $p) (local.get $P)))
        (local.set $dst (i32.add (local.get $out) (i32.mul (local.get $p) (local.get $wb))))
        (local.set $nbp (i32.add (local.get $nb) (i32.shl (i32.mul (local.get $p) (local.get $k)) (i32.const 2))))
        ;; the first neighbour's row as it is
        (local.set $row (i32.add (local.get $v) (i32.mul (i32.load (local.get $nbp)) (local.get $wb))))
        (local.set $c (i32.const 0))
        (block $firstdone
          (loop $first
            (br_if $firstdone (i32.ge_u (local.get $c) (local.get $wb)))
            (v128.store (i32.add (local.get $dst) (local.get $c)) (v128.load (i32.add (local.get $row) (local.get $c))))
            (local.set $c (i32.add (local.get $c) (i32.const 16)))
            (br $first)))
        ;; then each further neighbour's row, lane by lane
        (local.set $m (i32.const 1))
        (block $mdone
          (loop $mloop
            (br_if $mdone (i32.ge_u (local.get $m) (local.get $k)))
            (local.set $row
              (i32.add (local.get $v)
                (i32.mul (i32.load (i32.add (local.get $nbp) (i32.shl (local.get $m) (i32.const 2)))) (local.get $wb))))
            (local.set $c (i32.const 0))
            (block $cdone
              (loop $cloop
                (br_if $cdone (i32.ge_u (local.get $c) (local.get $wb)))
                (v128.store (i32.add (local.get $dst) (local.get $c))
                  (f32x4.pmax
                    (v128.load (i32.add (local.get $dst) (local.get $c)))
                    (v128.load (i32.add (local.get $row) (local.get $c)))))
                (local.set $c (i32.add (local.get $c) (i32.const 16)))
                (br $cloop)))
            (local.set $m (i32.add (local.get $m) (i32.const 1)))
            (br $mloop)))
        (local.set $p (i32.add (local.get $p) (i32.const 1)))
        (br $ploop)))))
