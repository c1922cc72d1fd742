;; The hot loop of vibgate's channel accumulator, in WebAssembly with 128-bit SIMD (two
;; float64 lanes). Same contract as `sums` in ../channel-accumulator.ts: over n float64
;; samples at byte offset p, the power sums of d = x − K, the min and max, the number of
;; samples equal to their predecessor (the first is compared with `prev`), and the samples
;; at or below `lo` / at or above `hi`. n must be even (the caller handles an odd tail).
;; Results at byte 0: s1, s2, s3, s4, min, max (f64), low count, high count (f64).
;; NaN samples make the sums NaN (the caller then takes its full loop), as in JavaScript.
;; Assembled by scripts/build-wasm.mjs into kernel-wasm.ts.
(module
  (memory (export "memory") 4)
  (func (export "sums")
    (param $p i32) (param $n i32) (param $K f64) (param $prev f64) (param $lo f64) (param $hi f64)
    (result i32)
    (local $end i32)
    (local $k v128) (local $v v128) (local $d v128) (local $d2 v128) (local $pv v128)
    (local $s1 v128) (local $s2 v128) (local $s3 v128) (local $s4 v128)
    (local $mn v128) (local $mx v128) (local $lov v128) (local $hiv v128)
    (local $reps v128) (local $cl v128) (local $ch v128)
    (local.set $k (f64x2.splat (local.get $K)))
    (local.set $lov (f64x2.splat (local.get $lo)))
    (local.set $hiv (f64x2.splat (local.get $hi)))
    (local.set $mn (f64x2.splat (f64.const inf)))
    (local.set $mx (f64x2.splat (f64.const -inf)))
    (local.set $pv (f64x2.splat (local.get $prev)))
    (local.set $end (i32.add (local.get $p) (i32.shl (local.get $n) (i32.const 3))))
    (block $done
      (loop $next
        (br_if $done (i32.ge_u (local.get $p) (local.get $end)))
        (local.set $v (v128.load (local.get $p)))
        ;; predecessors of the two lanes: [previous lane 1, this lane 0]
        (local.set $pv (i8x16.shuffle 8 9 10 11 12 13 14 15 16 17 18 19 20 21 22 23 (local.get $pv) (local.get $v)))
        ;; comparisons give all-ones (−1) lanes: subtracting them counts
        (local.set $reps (i64x2.sub (local.get $reps) (f64x2.eq (local.get $v) (local.get $pv))))
        (local.set $cl (i64x2.sub (local.get $cl) (f64x2.le (local.get $v) (local.get $lov))))
        (local.set $ch (i64x2.sub (local.get $ch)
          (v128.andnot (f64x2.ge (local.get $v) (local.get $hiv)) (f64x2.le (local.get $v) (local.get $lov)))))
        (local.set $pv (local.get $v))
        (local.set $d (f64x2.sub (local.get $v) (local.get $k)))
        (local.set $d2 (f64x2.mul (local.get $d) (local.get $d)))
        (local.set $s1 (f64x2.add (local.get $s1) (local.get $d)))
        (local.set $s2 (f64x2.add (local.get $s2) (local.get $d2)))
        (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $d2) (local.get $d))))
        (local.set $s4 (f64x2.add (local.get $s4) (f64x2.mul (local.get $d2) (local.get $d2))))
        ;; pmin/pmax: b < a ? b : a, so a NaN sample leaves the extremes alone
        (local.set $mn (f64x2.pmin (local.get $mn) (local.get $v)))
        (local.set $mx (f64x2.pmax (local.get $mx) (local.get $v)))
        (local.set $p (i32.add (local.get $p) (i32.const 16)))
        (br $next)))
    (f64.store (i32.const 0) (f64.add (f64x2.extract_lane 0 (local.get $s1)) (f64x2.extract_lane 1 (local.get $s1))))
    (f64.store (i32.const 8) (f64.add (f64x2.extract_lane 0 (local.get $s2)) (f64x2.extract_lane 1 (local.get $s2))))
    (f64.store (i32.const 16) (f64.add (f64x2.extract_lane 0 (local.get $s3)) (f64x2.extract_lane 1 (local.get $s3))))
    (f64.store (i32.const 24) (f64.add (f64x2.extract_lane 0 (local.get $s4)) (f64x2.extract_lane 1 (local.get $s4))))
    (f64.store (i32.const 32) (f64.min (f64x2.extract_lane 0 (local.get $mn)) (f64x2.extract_lane 1 (local.get $mn))))
    (f64.store (i32.const 40) (f64.max (f64x2.extract_lane 0 (local.get $mx)) (f64x2.extract_lane 1 (local.get $mx))))
    (f64.store (i32.const 48) (f64.convert_i64_s (i64.add (i64x2.extract_lane 0 (local.get $cl)) (i64x2.extract_lane 1 (local.get $cl)))))
    (f64.store (i32.const 56) (f64.convert_i64_s (i64.add (i64x2.extract_lane 0 (local.get $ch)) (i64x2.extract_lane 1 (local.get $ch)))))
    (i32.wrap_i64 (i64.add (i64x2.extract_lane 0 (local.get $reps)) (i64x2.extract_lane 1 (local.get $reps))))
  )
;; Deinterleaving decoders: F frames of C interleaved channels at `src` into C arrays of F
;; float64 at `dst` (channel c at dst + c·F·8), scaled like the JavaScript decoders in
;; src/readers/wav.ts (integer PCM times 2^−(bits−1)).
  (func (export "deint_f32") (param $src i32) (param $dst i32) (param $C i32) (param $F i32)
    (local $c i32) (local $s i32) (local $d i32) (local $e i32) (local $stride i32)
    (local.set $stride (i32.shl (local.get $C) (i32.const 2)))
    (block $cd (loop $cl
      (br_if $cd (i32.ge_u (local.get $c) (local.get $C)))
      (local.set $s (i32.add (local.get $src) (i32.shl (local.get $c) (i32.const 2))))
      (local.set $d (i32.add (local.get $dst) (i32.shl (i32.mul (local.get $c) (local.get $F)) (i32.const 3))))
      (local.set $e (i32.add (local.get $d) (i32.shl (local.get $F) (i32.const 3))))
      (block $id (loop $il
        (br_if $id (i32.ge_u (local.get $d) (local.get $e)))
        (f64.store (local.get $d) (f64.promote_f32 (f32.load (local.get $s))))
        (local.set $s (i32.add (local.get $s) (local.get $stride)))
        (local.set $d (i32.add (local.get $d) (i32.const 8)))
        (br $il)))
      (local.set $c (i32.add (local.get $c) (i32.const 1)))
      (br $cl)))
  )
  (func (export "deint_i16") (param $src i32) (param $dst i32) (param $C i32) (param $F i32)
    (local $c i32) (local $s i32) (local $d i32) (local $e i32) (local $stride i32)
    (local.set $stride (i32.shl (local.get $C) (i32.const 1)))
    (block $cd (loop $cl
      (br_if $cd (i32.ge_u (local.get $c) (local.get $C)))
      (local.set $s (i32.add (local.get $src) (i32.shl (local.get $c) (i32.const 1))))
      (local.set $d (i32.add (local.get $dst) (i32.shl (i32.mul (local.get $c) (local.get $F)) (i32.const 3))))
      (local.set $e (i32.add (local.get $d) (i32.shl (local.get $F) (i32.const 3))))
      (block $id (loop $il
        (br_if $id (i32.ge_u (local.get $d) (local.get $e)))
        (f64.store (local.get $d) (f64.mul (f64.convert_i32_s (i32.load16_s (local.get $s))) (f64.const 0x1p-15)))
        (local.set $s (i32.add (local.get $s) (local.get $stride)))
        (local.set $d (i32.add (local.get $d) (i32.const 8)))
        (br $il)))
      (local.set $c (i32.add (local.get $c) (i32.const 1)))
      (br $cl)))
  )
  (func (export "deint_i24") (param $src i32) (param $dst i32) (param $C i32) (param $F i32)
    (local $c i32) (local $s i32) (local $d i32) (local $e i32) (local $stride i32)
    (local.set $stride (i32.mul (local.get $C) (i32.const 3)))
    (block $cd (loop $cl
      (br_if $cd (i32.ge_u (local.get $c) (local.get $C)))
      (local.set $s (i32.add (local.get $src) (i32.mul (local.get $c) (i32.const 3))))
      (local.set $d (i32.add (local.get $dst) (i32.shl (i32.mul (local.get $c) (local.get $F)) (i32.const 3))))
      (local.set $e (i32.add (local.get $d) (i32.shl (local.get $F) (i32.const 3))))
      (block $id (loop $il
        (br_if $id (i32.ge_u (local.get $d) (local.get $e)))
        ;; three bytes little-endian, sign-extended from bit 23: (b0 | b1<<8 | b2<<16) << 8 >> 8
        (f64.store (local.get $d)
          (f64.mul
            (f64.convert_i32_s
              (i32.shr_s
                (i32.shl
                  (i32.or (i32.load16_u (local.get $s)) (i32.shl (i32.load8_u offset=2 (local.get $s)) (i32.const 16)))
                  (i32.const 8))
                (i32.const 8)))
            (f64.const 0x1p-23)))
        (local.set $s (i32.add (local.get $s) (local.get $stride)))
        (local.set $d (i32.add (local.get $d) (i32.const 8)))
        (br $il)))
      (local.set $c (i32.add (local.get $c) (i32.const 1)))
      (br $cl)))
  )
  ;; grow the memory to at least `pages` 64 KiB pages (done once per thread, before any view)
  (func (export "reserve") (param $pages i32) (result i32)
    (if (i32.lt_u (memory.size) (local.get $pages))
      (then (drop (memory.grow (i32.sub (local.get $pages) (memory.size))))))
    (memory.size)
  )
)
