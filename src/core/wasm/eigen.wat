;; Kernels of the dense symmetric eigen-solver (src/core/linalg/householder.ts, tridiagonal.ts):
;; the blocked Householder tridiagonalization (symmetric matrix-vector product, rank-2k
;; update, row updates), the Householder back-transformation and the Givens rotations of QL.
;; f64x2 arithmetic, multiply and add rounded separately. These are readouts, never stored in
;; a trajectory: sums here may be ordered differently from the plain-JavaScript loops, so the
;; results agree with them to rounding, not bit for bit.
;;
;; All pointers are byte addresses into the exported memory; matrices are row-major with a row
;; stride given in bytes. Bytes 0..255 are the kernels' own (a staged tile at 64..207).

(module
  (memory (export "memory") 1)

  ;; Σ_{j<len} x[j]·y[j] in two lanes (pairs of neighbours), lanes added at the end.
  (func $dot (export "dot") (param $x i32) (param $y i32) (param $len i32) (result f64)
    (local $acc v128) (local $end i32) (local $s f64)
    (local.set $end (i32.add (local.get $x) (i32.shl (i32.and (local.get $len) (i32.const -2)) (i32.const 3))))
    (block $done
      (loop $pairs
        (br_if $done (i32.ge_u (local.get $x) (local.get $end)))
        (local.set $acc (f64x2.add (local.get $acc) (f64x2.mul (v128.load (local.get $x)) (v128.load (local.get $y)))))
        (local.set $x (i32.add (local.get $x) (i32.const 16)))
        (local.set $y (i32.add (local.get $y) (i32.const 16)))
        (br $pairs)))
    (local.set $s (f64.add (f64x2.extract_lane 0 (local.get $acc)) (f64x2.extract_lane 1 (local.get $acc))))
    (if (i32.and (local.get $len) (i32.const 1))
      (then (local.set $s (f64.add (local.get $s) (f64.mul (f64.load (local.get $x)) (f64.load (local.get $y)))))))
    (local.get $s))

  ;; y[j] ← y[j] − c·x[j] for j < len.
  (func $axpy (param $y i32) (param $x i32) (param $len i32) (param $c f64)
    (local $cc v128) (local $end i32)
    (local.set $cc (f64x2.splat (local.get $c)))
    (local.set $end (i32.add (local.get $y) (i32.shl (i32.and (local.get $len) (i32.const -2)) (i32.const 3))))
    (block $done
      (loop $pairs
        (br_if $done (i32.ge_u (local.get $y) (local.get $end)))
        (v128.store (local.get $y) (f64x2.sub (v128.load (local.get $y)) (f64x2.mul (local.get $cc) (v128.load (local.get $x)))))
        (local.set $x (i32.add (local.get $x) (i32.const 16)))
        (local.set $y (i32.add (local.get $y) (i32.const 16)))
        (br $pairs)))
    (if (i32.and (local.get $len) (i32.const 1))
      (then (f64.store (local.get $y) (f64.sub (f64.load (local.get $y)) (f64.mul (local.get $c) (f64.load (local.get $x))))))))

;; dst[j] ← dst[j] − Σ_{k<count} coef[k]·src[k·stride + j] for j < len (several vectors
  ;; subtracted from one, each coefficient at $coef + 8k). Four source rows per pass, so dst
  ;; is loaded and stored once for every four.
  (func $subtractRows (export "subtractRows") (param $dst i32) (param $src i32) (param $stride i32) (param $coef i32) (param $count i32) (param $len i32)
    (local $k i32) (local $j i32) (local $end i32) (local $r1 i32) (local $r2 i32) (local $r3 i32)
    (local $c0 v128) (local $c1 v128) (local $c2 v128) (local $c3 v128)
    (local.set $end (i32.shl (i32.and (local.get $len) (i32.const -2)) (i32.const 3)))
    (block $quads_done
      (loop $quads
        (br_if $quads_done (i32.gt_s (i32.add (local.get $k) (i32.const 4)) (local.get $count)))
        (local.set $r1 (i32.add (local.get $src) (local.get $stride)))
        (local.set $r2 (i32.add (local.get $r1) (local.get $stride)))
        (local.set $r3 (i32.add (local.get $r2) (local.get $stride)))
        (local.set $c0 (v128.load64_splat offset=0 (local.get $coef)))
        (local.set $c1 (v128.load64_splat offset=8 (local.get $coef)))
        (local.set $c2 (v128.load64_splat offset=16 (local.get $coef)))
        (local.set $c3 (v128.load64_splat offset=24 (local.get $coef)))
        (local.set $j (i32.const 0))
        (block $pairs_done
          (loop $pairs
            (br_if $pairs_done (i32.ge_u (local.get $j) (local.get $end)))
            (v128.store (i32.add (local.get $dst) (local.get $j))
              (f64x2.sub (v128.load (i32.add (local.get $dst) (local.get $j)))
                (f64x2.add
                  (f64x2.add (f64x2.mul (local.get $c0) (v128.load (i32.add (local.get $src) (local.get $j))))
                             (f64x2.mul (local.get $c1) (v128.load (i32.add (local.get $r1) (local.get $j)))))
                  (f64x2.add (f64x2.mul (local.get $c2) (v128.load (i32.add (local.get $r2) (local.get $j))))
                             (f64x2.mul (local.get $c3) (v128.load (i32.add (local.get $r3) (local.get $j))))))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $pairs)))
        (if (i32.and (local.get $len) (i32.const 1))
          (then
            (f64.store (i32.add (local.get $dst) (local.get $j))
              (f64.sub (f64.load (i32.add (local.get $dst) (local.get $j)))
                (f64.add
                  (f64.add (f64.mul (f64.load offset=0 (local.get $coef)) (f64.load (i32.add (local.get $src) (local.get $j))))
                           (f64.mul (f64.load offset=8 (local.get $coef)) (f64.load (i32.add (local.get $r1) (local.get $j)))))
                  (f64.add (f64.mul (f64.load offset=16 (local.get $coef)) (f64.load (i32.add (local.get $r2) (local.get $j))))
                           (f64.mul (f64.load offset=24 (local.get $coef)) (f64.load (i32.add (local.get $r3) (local.get $j))))))))))
        (local.set $src (i32.add (local.get $r3) (local.get $stride)))
        (local.set $coef (i32.add (local.get $coef) (i32.const 32)))
        (local.set $k (i32.add (local.get $k) (i32.const 4)))
        (br $quads)))
    (block $done
      (loop $rows
        (br_if $done (i32.ge_s (local.get $k) (local.get $count)))
        (call $axpy (local.get $dst) (local.get $src) (local.get $len) (f64.load (local.get $coef)))
        (local.set $src (i32.add (local.get $src) (local.get $stride)))
        (local.set $coef (i32.add (local.get $coef) (i32.const 8)))
        (local.set $k (i32.add (local.get $k) (i32.const 1)))
        (br $rows))))

  ;; out[k] ← src[k·stride + ·]·v over len entries, for k < count; four rows per pass over v.
  (func (export "dots") (param $out i32) (param $src i32) (param $stride i32) (param $count i32) (param $v i32) (param $len i32)
    (local $k i32) (local $j i32) (local $end i32) (local $r1 i32) (local $r2 i32) (local $r3 i32)
    (local $s0 v128) (local $s1 v128) (local $s2 v128) (local $s3 v128) (local $x v128)
    (local.set $end (i32.shl (i32.and (local.get $len) (i32.const -2)) (i32.const 3)))
    (block $quads_done
      (loop $quads
        (br_if $quads_done (i32.gt_s (i32.add (local.get $k) (i32.const 4)) (local.get $count)))
        (local.set $r1 (i32.add (local.get $src) (local.get $stride)))
        (local.set $r2 (i32.add (local.get $r1) (local.get $stride)))
        (local.set $r3 (i32.add (local.get $r2) (local.get $stride)))
        (local.set $s0 (v128.const f64x2 0 0))
        (local.set $s1 (v128.const f64x2 0 0))
        (local.set $s2 (v128.const f64x2 0 0))
        (local.set $s3 (v128.const f64x2 0 0))
        (local.set $j (i32.const 0))
        (block $pairs_done
          (loop $pairs
            (br_if $pairs_done (i32.ge_u (local.get $j) (local.get $end)))
            (local.set $x (v128.load (i32.add (local.get $v) (local.get $j))))
            (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $src) (local.get $j))))))
            (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r1) (local.get $j))))))
            (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r2) (local.get $j))))))
            (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r3) (local.get $j))))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $pairs)))
        (if (i32.and (local.get $len) (i32.const 1))
          (then
            (local.set $x (v128.load64_zero (i32.add (local.get $v) (local.get $j))))
            (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $x) (v128.load64_zero (i32.add (local.get $src) (local.get $j))))))
            (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $x) (v128.load64_zero (i32.add (local.get $r1) (local.get $j))))))
            (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $x) (v128.load64_zero (i32.add (local.get $r2) (local.get $j))))))
            (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $x) (v128.load64_zero (i32.add (local.get $r3) (local.get $j))))))))
        (f64.store offset=0 (local.get $out) (f64.add (f64x2.extract_lane 0 (local.get $s0)) (f64x2.extract_lane 1 (local.get $s0))))
        (f64.store offset=8 (local.get $out) (f64.add (f64x2.extract_lane 0 (local.get $s1)) (f64x2.extract_lane 1 (local.get $s1))))
        (f64.store offset=16 (local.get $out) (f64.add (f64x2.extract_lane 0 (local.get $s2)) (f64x2.extract_lane 1 (local.get $s2))))
        (f64.store offset=24 (local.get $out) (f64.add (f64x2.extract_lane 0 (local.get $s3)) (f64x2.extract_lane 1 (local.get $s3))))
        (local.set $src (i32.add (local.get $r3) (local.get $stride)))
        (local.set $out (i32.add (local.get $out) (i32.const 32)))
        (local.set $k (i32.add (local.get $k) (i32.const 4)))
        (br $quads)))
    (block $done
      (loop $rows
        (br_if $done (i32.ge_s (local.get $k) (local.get $count)))
        (f64.store (local.get $out) (call $dot (local.get $src) (local.get $v) (local.get $len)))
        (local.set $src (i32.add (local.get $src) (local.get $stride)))
        (local.set $out (i32.add (local.get $out) (i32.const 8)))
        (local.set $k (i32.add (local.get $k) (i32.const 1)))
        (br $rows))))

  ;; Pass 1's update and pass 2's dot products of CGS2 (krylov-basis.ts) in one sweep over the
  ;; basis, chunk by chunk ($chunk entries, even, so chunks start on even indices): a chunk's
  ;; update dst[chunk] −= Σ_k coef[k]·src[k, chunk] (as $subtractRows) runs in the same loop as
  ;; the previous chunk's products src[k, ·]·dst[·], whose updates are complete and whose rows
  ;; are still in cache, added into two-lane sums kept at $acc (16 bytes a row) in the order of
  ;; "dots"; the odd last entry and the lanes' reduction come at the end, as in "dots". Every
  ;; entry of dst gets its updates, and every sum its terms, in the order of "subtractRows" then
  ;; "dots": the same bits, with the basis read from memory once instead of twice.
  (func (export "subtractThenDots") (param $dst i32) (param $src i32) (param $stride i32) (param $coef i32) (param $count i32) (param $len i32)
    (param $out i32) (param $acc i32) (param $chunk i32)
    (local $a i32) (local $n i32) (local $pairs i32) (local $i i32) (local $quads i32) (local $left i32) (local $at i32) (local $prev i32)
    (local.set $chunk (select (i32.and (local.get $chunk) (i32.const -2)) (i32.const 2) (i32.ge_s (local.get $chunk) (i32.const 2))))
    (block $zeroed
      (loop $zero
        (br_if $zeroed (i32.ge_s (local.get $i) (local.get $count)))
        (v128.store (i32.add (local.get $acc) (i32.shl (local.get $i) (i32.const 4))) (v128.const f64x2 0 0))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $zero)))
    (local.set $pairs (i32.and (local.get $len) (i32.const -2)))
    (local.set $quads (i32.and (local.get $count) (i32.const -4)))
    (local.set $left (i32.mul (local.get $quads) (local.get $stride)))
    (if (i32.gt_s (local.get $pairs) (i32.const 0))
      (then
        ;; chunk 0's update alone; then each chunk's update beside the previous chunk's dot
        ;; products (one loop streams the new rows in while the cached ones are summed)
        (local.set $n (select (local.get $chunk) (local.get $pairs) (i32.le_s (local.get $chunk) (local.get $pairs))))
        (call $subtractRows (local.get $dst) (local.get $src) (local.get $stride) (local.get $coef) (local.get $count) (local.get $n))
        (local.set $a (local.get $n))
        (block $chunks_done
          (loop $chunks
            (br_if $chunks_done (i32.ge_s (local.get $a) (local.get $pairs)))
            (local.set $n (select (local.get $chunk) (i32.sub (local.get $pairs) (local.get $a))
              (i32.le_s (local.get $chunk) (i32.sub (local.get $pairs) (local.get $a)))))
            (local.set $at (i32.shl (local.get $a) (i32.const 3)))
            (local.set $prev (i32.shl (i32.sub (local.get $a) (local.get $chunk)) (i32.const 3)))
            (call $subtractBesideDots (i32.add (local.get $dst) (local.get $at)) (i32.add (local.get $src) (local.get $at)) (local.get $stride)
              (local.get $coef) (local.get $quads) (local.get $n) (local.get $chunk) (local.get $acc))
            ;; the rows left after the fours: their updates of this chunk, then their sums of the last
            (call $subtractRows (i32.add (local.get $dst) (local.get $at)) (i32.add (i32.add (local.get $src) (local.get $left)) (local.get $at)) (local.get $stride)
              (i32.add (local.get $coef) (i32.shl (local.get $quads) (i32.const 3))) (i32.sub (local.get $count) (local.get $quads)) (local.get $n))
            (call $accumulateDots (i32.add (local.get $acc) (i32.shl (local.get $quads) (i32.const 4))) (i32.add (i32.add (local.get $src) (local.get $left)) (local.get $prev))
              (local.get $stride) (i32.sub (local.get $count) (local.get $quads)) (i32.add (local.get $dst) (local.get $prev)) (local.get $chunk))
            (local.set $a (i32.add (local.get $a) (local.get $n)))
            (br $chunks)))
        ;; the last chunk's sums
        (local.set $prev (i32.shl (i32.sub (local.get $a) (local.get $n)) (i32.const 3)))
        (call $accumulateDots (local.get $acc) (i32.add (local.get $src) (local.get $prev)) (local.get $stride) (local.get $count)
          (i32.add (local.get $dst) (local.get $prev)) (local.get $n))))
    (if (i32.and (local.get $len) (i32.const 1))
      (then
        (call $subtractRows (i32.add (local.get $dst) (i32.shl (local.get $pairs) (i32.const 3))) (i32.add (local.get $src) (i32.shl (local.get $pairs) (i32.const 3)))
          (local.get $stride) (local.get $coef) (local.get $count) (i32.const 1))))
    (call $finishDots (local.get $out) (local.get $acc) (local.get $src) (local.get $stride) (local.get $count) (local.get $dst) (local.get $len)))

;; For each of the first `quads` rows in fours: dst[j] −= (c0·q0[j] + c1·q1[j]) + (c2·q2[j] +
  ;; c3·q3[j]) for j < n (as $subtractRows), and in the same loop the rows' two-lane sums at $acc
  ;; take the products of the chunk before (the `chunk` entries ending at dst, whose updates are
  ;; complete) in the order of $accumulateDots; entries n ≤ j < chunk of that chunk after.
  (func $subtractBesideDots (param $dst i32) (param $src i32) (param $stride i32) (param $coef i32) (param $quads i32) (param $n i32) (param $chunk i32) (param $acc i32)
    (local $k i32) (local $j i32) (local $end i32) (local $back i32) (local $r1 i32) (local $r2 i32) (local $r3 i32)
    (local $b0 i32) (local $b1 i32) (local $b2 i32) (local $b3 i32) (local $v i32)
    (local $c0 v128) (local $c1 v128) (local $c2 v128) (local $c3 v128)
    (local $s0 v128) (local $s1 v128) (local $s2 v128) (local $s3 v128) (local $x v128)
    (local.set $end (i32.shl (local.get $n) (i32.const 3)))
    (local.set $back (i32.shl (local.get $chunk) (i32.const 3)))
    (local.set $v (i32.sub (local.get $dst) (local.get $back)))
    (block $quads_done
      (loop $quads
        (br_if $quads_done (i32.ge_s (local.get $k) (local.get $quads)))
        (local.set $r1 (i32.add (local.get $src) (local.get $stride)))
        (local.set $r2 (i32.add (local.get $r1) (local.get $stride)))
        (local.set $r3 (i32.add (local.get $r2) (local.get $stride)))
        (local.set $b0 (i32.sub (local.get $src) (local.get $back)))
        (local.set $b1 (i32.sub (local.get $r1) (local.get $back)))
        (local.set $b2 (i32.sub (local.get $r2) (local.get $back)))
        (local.set $b3 (i32.sub (local.get $r3) (local.get $back)))
        (local.set $c0 (v128.load64_splat offset=0 (local.get $coef)))
        (local.set $c1 (v128.load64_splat offset=8 (local.get $coef)))
        (local.set $c2 (v128.load64_splat offset=16 (local.get $coef)))
        (local.set $c3 (v128.load64_splat offset=24 (local.get $coef)))
        (local.set $s0 (v128.load offset=0 (local.get $acc)))
        (local.set $s1 (v128.load offset=16 (local.get $acc)))
        (local.set $s2 (v128.load offset=32 (local.get $acc)))
        (local.set $s3 (v128.load offset=48 (local.get $acc)))
        (local.set $j (i32.const 0))
        (block $both_done
          (loop $both
            (br_if $both_done (i32.ge_u (local.get $j) (local.get $end)))
            (v128.store (i32.add (local.get $dst) (local.get $j))
              (f64x2.sub (v128.load (i32.add (local.get $dst) (local.get $j)))
                (f64x2.add
                  (f64x2.add (f64x2.mul (local.get $c0) (v128.load (i32.add (local.get $src) (local.get $j))))
                             (f64x2.mul (local.get $c1) (v128.load (i32.add (local.get $r1) (local.get $j)))))
                  (f64x2.add (f64x2.mul (local.get $c2) (v128.load (i32.add (local.get $r2) (local.get $j))))
                             (f64x2.mul (local.get $c3) (v128.load (i32.add (local.get $r3) (local.get $j))))))))
            (local.set $x (v128.load (i32.add (local.get $v) (local.get $j))))
            (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $b0) (local.get $j))))))
            (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $b1) (local.get $j))))))
            (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $b2) (local.get $j))))))
            (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $b3) (local.get $j))))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $both)))
        (block $dots_done
          (loop $dots
            (br_if $dots_done (i32.ge_u (local.get $j) (local.get $back)))
            (local.set $x (v128.load (i32.add (local.get $v) (local.get $j))))
            (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $b0) (local.get $j))))))
            (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $b1) (local.get $j))))))
            (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $b2) (local.get $j))))))
            (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $b3) (local.get $j))))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $dots)))
        (v128.store offset=0 (local.get $acc) (local.get $s0))
        (v128.store offset=16 (local.get $acc) (local.get $s1))
        (v128.store offset=32 (local.get $acc) (local.get $s2))
        (v128.store offset=48 (local.get $acc) (local.get $s3))
        (local.set $src (i32.add (local.get $r3) (local.get $stride)))
        (local.set $coef (i32.add (local.get $coef) (i32.const 32)))
        (local.set $acc (i32.add (local.get $acc) (i32.const 64)))
        (local.set $k (i32.add (local.get $k) (i32.const 4)))
        (br $quads))))

  ;; acc[k] += src[k·stride + ·]·v lane by lane over an even len (lane 0 even entries, lane 1
  ;; odd), eight rows per pass over v (each row's sum is its own chain, so grouping rows changes
  ;; no bit; eight chains run faster than four from cache), then four, then one at a time;
  ;; acc[k] at $acc + 16k.
  (func $accumulateDots (param $acc i32) (param $src i32) (param $stride i32) (param $count i32) (param $v i32) (param $len i32)
    (local $k i32) (local $j i32) (local $end i32) (local $r1 i32) (local $r2 i32) (local $r3 i32)
    (local $s0 v128) (local $s1 v128) (local $s2 v128) (local $s3 v128) (local $x v128)
    (local $r4 i32) (local $r5 i32) (local $r6 i32) (local $r7 i32)
    (local $s4 v128) (local $s5 v128) (local $s6 v128) (local $s7 v128)
    (local.set $end (i32.shl (local.get $len) (i32.const 3)))
    (block $octets_done
      (loop $octets
        (br_if $octets_done (i32.gt_s (i32.add (local.get $k) (i32.const 8)) (local.get $count)))
        (local.set $r1 (i32.add (local.get $src) (local.get $stride)))
        (local.set $r2 (i32.add (local.get $r1) (local.get $stride)))
        (local.set $r3 (i32.add (local.get $r2) (local.get $stride)))
        (local.set $r4 (i32.add (local.get $r3) (local.get $stride)))
        (local.set $r5 (i32.add (local.get $r4) (local.get $stride)))
        (local.set $r6 (i32.add (local.get $r5) (local.get $stride)))
        (local.set $r7 (i32.add (local.get $r6) (local.get $stride)))
        (local.set $s0 (v128.load offset=0 (local.get $acc)))
        (local.set $s1 (v128.load offset=16 (local.get $acc)))
        (local.set $s2 (v128.load offset=32 (local.get $acc)))
        (local.set $s3 (v128.load offset=48 (local.get $acc)))
        (local.set $s4 (v128.load offset=64 (local.get $acc)))
        (local.set $s5 (v128.load offset=80 (local.get $acc)))
        (local.set $s6 (v128.load offset=96 (local.get $acc)))
        (local.set $s7 (v128.load offset=112 (local.get $acc)))
        (local.set $j (i32.const 0))
        (block $pairs8_done
          (loop $pairs8
            (br_if $pairs8_done (i32.ge_u (local.get $j) (local.get $end)))
            (local.set $x (v128.load (i32.add (local.get $v) (local.get $j))))
            (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $src) (local.get $j))))))
            (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r1) (local.get $j))))))
            (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r2) (local.get $j))))))
            (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r3) (local.get $j))))))
            (local.set $s4 (f64x2.add (local.get $s4) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r4) (local.get $j))))))
            (local.set $s5 (f64x2.add (local.get $s5) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r5) (local.get $j))))))
            (local.set $s6 (f64x2.add (local.get $s6) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r6) (local.get $j))))))
            (local.set $s7 (f64x2.add (local.get $s7) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r7) (local.get $j))))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $pairs8)))
        (v128.store offset=0 (local.get $acc) (local.get $s0))
        (v128.store offset=16 (local.get $acc) (local.get $s1))
        (v128.store offset=32 (local.get $acc) (local.get $s2))
        (v128.store offset=48 (local.get $acc) (local.get $s3))
        (v128.store offset=64 (local.get $acc) (local.get $s4))
        (v128.store offset=80 (local.get $acc) (local.get $s5))
        (v128.store offset=96 (local.get $acc) (local.get $s6))
        (v128.store offset=112 (local.get $acc) (local.get $s7))
        (local.set $src (i32.add (local.get $r7) (local.get $stride)))
        (local.set $acc (i32.add (local.get $acc) (i32.const 128)))
        (local.set $k (i32.add (local.get $k) (i32.const 8)))
        (br $octets)))
    (block $quads_done
      (loop $quads
        (br_if $quads_done (i32.gt_s (i32.add (local.get $k) (i32.const 4)) (local.get $count)))
        (local.set $r1 (i32.add (local.get $src) (local.get $stride)))
        (local.set $r2 (i32.add (local.get $r1) (local.get $stride)))
        (local.set $r3 (i32.add (local.get $r2) (local.get $stride)))
        (local.set $s0 (v128.load offset=0 (local.get $acc)))
        (local.set $s1 (v128.load offset=16 (local.get $acc)))
        (local.set $s2 (v128.load offset=32 (local.get $acc)))
        (local.set $s3 (v128.load offset=48 (local.get $acc)))
        (local.set $j (i32.const 0))
        (block $pairs_done
          (loop $pairs
            (br_if $pairs_done (i32.ge_u (local.get $j) (local.get $end)))
            (local.set $x (v128.load (i32.add (local.get $v) (local.get $j))))
            (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $src) (local.get $j))))))
            (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r1) (local.get $j))))))
            (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r2) (local.get $j))))))
            (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $r3) (local.get $j))))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $pairs)))
        (v128.store offset=0 (local.get $acc) (local.get $s0))
        (v128.store offset=16 (local.get $acc) (local.get $s1))
        (v128.store offset=32 (local.get $acc) (local.get $s2))
        (v128.store offset=48 (local.get $acc) (local.get $s3))
        (local.set $src (i32.add (local.get $r3) (local.get $stride)))
        (local.set $acc (i32.add (local.get $acc) (i32.const 64)))
        (local.set $k (i32.add (local.get $k) (i32.const 4)))
        (br $quads)))
    (block $done
      (loop $rows
        (br_if $done (i32.ge_s (local.get $k) (local.get $count)))
        (local.set $s0 (v128.load (local.get $acc)))
        (local.set $j (i32.const 0))
        (block $row_done
          (loop $row_pairs
            (br_if $row_done (i32.ge_u (local.get $j) (local.get $end)))
            (local.set $s0 (f64x2.add (local.get $s0)
              (f64x2.mul (v128.load (i32.add (local.get $src) (local.get $j))) (v128.load (i32.add (local.get $v) (local.get $j))))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $row_pairs)))
        (v128.store (local.get $acc) (local.get $s0))
        (local.set $src (i32.add (local.get $src) (local.get $stride)))
        (local.set $acc (i32.add (local.get $acc) (i32.const 16)))
        (local.set $k (i32.add (local.get $k) (i32.const 1)))
        (br $rows))))

  ;; out[k] from the two-lane sums at $acc as "dots" ends them: rows in fours take the odd last
  ;; entry into lane 0 (lane 1 adds 0·0) and then add the lanes; the rows left add the lanes
  ;; first and the last entry's product after (as $dot).
  (func $finishDots (param $out i32) (param $acc i32) (param $src i32) (param $stride i32) (param $count i32) (param $v i32) (param $len i32)
    (local $k i32) (local $j i32) (local $odd i32) (local $s v128) (local $x v128) (local $t f64)
    (local.set $odd (i32.and (local.get $len) (i32.const 1)))
    (local.set $j (i32.shl (i32.and (local.get $len) (i32.const -2)) (i32.const 3)))
    ;; read only when it exists: v may end where the memory does
    (if (local.get $odd) (then (local.set $x (v128.load64_zero (i32.add (local.get $v) (local.get $j))))))
    (block $quads_done
      (loop $quads
        (br_if $quads_done (i32.ge_s (local.get $k) (i32.and (local.get $count) (i32.const -4))))
        (local.set $s (v128.load (local.get $acc)))
        (if (local.get $odd)
          (then (local.set $s (f64x2.add (local.get $s) (f64x2.mul (local.get $x) (v128.load64_zero (i32.add (local.get $src) (local.get $j))))))))
        (f64.store (local.get $out) (f64.add (f64x2.extract_lane 0 (local.get $s)) (f64x2.extract_lane 1 (local.get $s))))
        (local.set $src (i32.add (local.get $src) (local.get $stride)))
        (local.set $acc (i32.add (local.get $acc) (i32.const 16)))
        (local.set $out (i32.add (local.get $out) (i32.const 8)))
        (local.set $k (i32.add (local.get $k) (i32.const 1)))
        (br $quads)))
    (block $done
      (loop $rows
        (br_if $done (i32.ge_s (local.get $k) (local.get $count)))
        (local.set $s (v128.load (local.get $acc)))
        (local.set $t (f64.add (f64x2.extract_lane 0 (local.get $s)) (f64x2.extract_lane 1 (local.get $s))))
        (if (local.get $odd)
          (then (local.set $t (f64.add (local.get $t) (f64.mul (f64.load (i32.add (local.get $src) (local.get $j))) (f64.load (i32.add (local.get $v) (local.get $j))))))))
        (f64.store (local.get $out) (local.get $t))
        (local.set $src (i32.add (local.get $src) (local.get $stride)))
        (local.set $acc (i32.add (local.get $acc) (i32.const 16)))
        (local.set $out (i32.add (local.get $out) (i32.const 8)))
        (local.set $k (i32.add (local.get $k) (i32.const 1)))
        (br $rows))))

    ;; p[r] ← Σ_j B[r, j]·u[j] for r < m, B the symmetric matrix whose lower triangle (j ≤ r) is
  ;; packed at $a: row r starts at entry r(r + 1)/2, so the leading block is one sequential
  ;; stream (rows of a square array are separate streams, which measured three times slower
  ;; once the triangle outgrew the caches). Two rows at a time: each row gives a dot product
  ;; (its own p entry) and an axpy (the entries of p left of the diagonal), and the pair shares
  ;; one pass over p.
  (func (export "symv") (param $a i32) (param $m i32) (param $u i32) (param $p i32)
    (local $r i32) (local $j i32) (local $row0 i32) (local $row1 i32) (local $row2 i32) (local $row3 i32) (local $end i32)
    (local $q i32) (local $t i32) (local $c i32) (local $rowt i32)
    (local $u0 v128) (local $u1 v128) (local $u2 v128) (local $u3 v128) (local $s0 v128) (local $s1 v128) (local $s2 v128) (local $s3 v128)
    (local $x0 v128) (local $x1 v128) (local $x2 v128) (local $x3 v128) (local $uj v128)
    (local $f0 f64) (local $f1 f64) (local $t0 f64) (local $t1 f64) (local $a10 f64) (local $b f64) (local $ft f64)
    ;; p ← 0
    (local.set $j (i32.const 0))
    (block $zeroed
      (loop $zero
        (br_if $zeroed (i32.ge_s (local.get $j) (local.get $m)))
        (f64.store (i32.add (local.get $p) (i32.shl (local.get $j) (i32.const 3))) (f64.const 0))
        (local.set $j (i32.add (local.get $j) (i32.const 1)))
        (br $zero)))
    (local.set $r (i32.const 0))
    ;; four rows at a time: four streams of the matrix in flight, p and u read once for four rows
    (block $quads_done
      (loop $quads
        (br_if $quads_done (i32.gt_s (i32.add (local.get $r) (i32.const 4)) (local.get $m)))
        (local.set $row0 (i32.add (local.get $a) (i32.shl (i32.mul (local.get $r) (i32.add (local.get $r) (i32.const 1))) (i32.const 2))))
        (local.set $row1 (i32.add (local.get $row0) (i32.shl (i32.add (local.get $r) (i32.const 1)) (i32.const 3))))
        (local.set $row2 (i32.add (local.get $row1) (i32.shl (i32.add (local.get $r) (i32.const 2)) (i32.const 3))))
        (local.set $row3 (i32.add (local.get $row2) (i32.shl (i32.add (local.get $r) (i32.const 3)) (i32.const 3))))
        (local.set $u0 (v128.load64_splat offset=0 (i32.add (local.get $u) (i32.shl (local.get $r) (i32.const 3)))))
        (local.set $u1 (v128.load64_splat offset=8 (i32.add (local.get $u) (i32.shl (local.get $r) (i32.const 3)))))
        (local.set $u2 (v128.load64_splat offset=16 (i32.add (local.get $u) (i32.shl (local.get $r) (i32.const 3)))))
        (local.set $u3 (v128.load64_splat offset=24 (i32.add (local.get $u) (i32.shl (local.get $r) (i32.const 3)))))
        (local.set $s0 (v128.const f64x2 0 0))
        (local.set $s1 (v128.const f64x2 0 0))
        (local.set $s2 (v128.const f64x2 0 0))
        (local.set $s3 (v128.const f64x2 0 0))
        (local.set $j (i32.const 0))
        (local.set $end (i32.shl (i32.and (local.get $r) (i32.const -2)) (i32.const 3)))
        (block $qcols_done
          (loop $qcols
            (br_if $qcols_done (i32.ge_u (local.get $j) (local.get $end)))
            (local.set $x0 (v128.load (i32.add (local.get $row0) (local.get $j))))
            (local.set $x1 (v128.load (i32.add (local.get $row1) (local.get $j))))
            (local.set $x2 (v128.load (i32.add (local.get $row2) (local.get $j))))
            (local.set $x3 (v128.load (i32.add (local.get $row3) (local.get $j))))
            (local.set $uj (v128.load (i32.add (local.get $u) (local.get $j))))
            (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $x0) (local.get $uj))))
            (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $x1) (local.get $uj))))
            (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $x2) (local.get $uj))))
            (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $x3) (local.get $uj))))
            (v128.store (i32.add (local.get $p) (local.get $j))
              (f64x2.add (v128.load (i32.add (local.get $p) (local.get $j)))
                (f64x2.add
                  (f64x2.add (f64x2.mul (local.get $x0) (local.get $u0)) (f64x2.mul (local.get $x1) (local.get $u1)))
                  (f64x2.add (f64x2.mul (local.get $x2) (local.get $u2)) (f64x2.mul (local.get $x3) (local.get $u3))))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $qcols)))
        ;; the four dot products into p[r..r+3] (stored first, the block below adds to them)
        (local.set $q (i32.add (local.get $p) (i32.shl (local.get $r) (i32.const 3))))
        (f64.store offset=0 (local.get $q) (f64.add (f64x2.extract_lane 0 (local.get $s0)) (f64x2.extract_lane 1 (local.get $s0))))
        (f64.store offset=8 (local.get $q) (f64.add (f64x2.extract_lane 0 (local.get $s1)) (f64x2.extract_lane 1 (local.get $s1))))
        (f64.store offset=16 (local.get $q) (f64.add (f64x2.extract_lane 0 (local.get $s2)) (f64x2.extract_lane 1 (local.get $s2))))
        (f64.store offset=24 (local.get $q) (f64.add (f64x2.extract_lane 0 (local.get $s3)) (f64x2.extract_lane 1 (local.get $s3))))
        ;; the rest, one entry at a time: column r − 1 when r is odd, then the 4×4 diagonal block
        (local.set $t (i32.const 0))
        (loop $block_rows
          (local.set $rowt (i32.add (local.get $row0)
            (i32.shl (i32.add (i32.mul (local.get $t) (local.get $r)) (i32.shr_u (i32.mul (local.get $t) (i32.add (local.get $t) (i32.const 1))) (i32.const 1))) (i32.const 3))))
          (local.set $ft (f64.load (i32.add (local.get $u) (i32.shl (i32.add (local.get $r) (local.get $t)) (i32.const 3)))))
          (local.set $c (i32.shr_u (local.get $end) (i32.const 3)))
          (block $entries_done
            (loop $entries
              (br_if $entries_done (i32.gt_s (local.get $c) (i32.add (local.get $r) (local.get $t))))
              (local.set $b (f64.load (i32.add (local.get $rowt) (i32.shl (local.get $c) (i32.const 3)))))
              ;; row part: p[r + t] += B[r + t, c]·u[c]
              (f64.store (i32.add (local.get $q) (i32.shl (local.get $t) (i32.const 3)))
                (f64.add (f64.load (i32.add (local.get $q) (i32.shl (local.get $t) (i32.const 3))))
                  (f64.mul (local.get $b) (f64.load (i32.add (local.get $u) (i32.shl (local.get $c) (i32.const 3)))))))
              ;; column part: p[c] += B[r + t, c]·u[r + t] below the diagonal
              (if (i32.lt_s (local.get $c) (i32.add (local.get $r) (local.get $t)))
                (then
                  (f64.store (i32.add (local.get $p) (i32.shl (local.get $c) (i32.const 3)))
                    (f64.add (f64.load (i32.add (local.get $p) (i32.shl (local.get $c) (i32.const 3))))
                      (f64.mul (local.get $b) (local.get $ft))))))
              (local.set $c (i32.add (local.get $c) (i32.const 1)))
              (br $entries)))
          (br_if $block_rows (i32.lt_s (local.tee $t (i32.add (local.get $t) (i32.const 1))) (i32.const 4))))
        (local.set $r (i32.add (local.get $r) (i32.const 4)))
        (br $quads)))
    (block $pairs_done
      (loop $pairs
        (br_if $pairs_done (i32.gt_s (i32.add (local.get $r) (i32.const 2)) (local.get $m)))
        (local.set $row0 (i32.add (local.get $a) (i32.shl (i32.mul (local.get $r) (i32.add (local.get $r) (i32.const 1))) (i32.const 2))))
        (local.set $row1 (i32.add (local.get $row0) (i32.shl (i32.add (local.get $r) (i32.const 1)) (i32.const 3))))
        (local.set $f0 (f64.load (i32.add (local.get $u) (i32.shl (local.get $r) (i32.const 3)))))
        (local.set $f1 (f64.load offset=8 (i32.add (local.get $u) (i32.shl (local.get $r) (i32.const 3)))))
        (local.set $u0 (f64x2.splat (local.get $f0)))
        (local.set $u1 (f64x2.splat (local.get $f1)))
        (local.set $s0 (v128.const f64x2 0 0))
        (local.set $s1 (v128.const f64x2 0 0))
        ;; columns j < r (even count pairs, then one left over when r is odd)
        (local.set $j (i32.const 0))
        (local.set $end (i32.shl (i32.and (local.get $r) (i32.const -2)) (i32.const 3)))
        (block $cols_done
          (loop $cols
            (br_if $cols_done (i32.ge_u (local.get $j) (local.get $end)))
            (local.set $x0 (v128.load (i32.add (local.get $row0) (local.get $j))))
            (local.set $x1 (v128.load (i32.add (local.get $row1) (local.get $j))))
            (local.set $uj (v128.load (i32.add (local.get $u) (local.get $j))))
            (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $x0) (local.get $uj))))
            (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $x1) (local.get $uj))))
            (v128.store (i32.add (local.get $p) (local.get $j))
              (f64x2.add (v128.load (i32.add (local.get $p) (local.get $j)))
                (f64x2.add (f64x2.mul (local.get $x0) (local.get $u0)) (f64x2.mul (local.get $x1) (local.get $u1)))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $cols)))
        (local.set $t0 (f64.add (f64x2.extract_lane 0 (local.get $s0)) (f64x2.extract_lane 1 (local.get $s0))))
        (local.set $t1 (f64.add (f64x2.extract_lane 0 (local.get $s1)) (f64x2.extract_lane 1 (local.get $s1))))
        (if (i32.and (local.get $r) (i32.const 1))
          (then
            ;; column r − 1
            (local.set $t0 (f64.add (local.get $t0) (f64.mul (f64.load (i32.add (local.get $row0) (local.get $j))) (f64.load (i32.add (local.get $u) (local.get $j))))))
            (local.set $t1 (f64.add (local.get $t1) (f64.mul (f64.load (i32.add (local.get $row1) (local.get $j))) (f64.load (i32.add (local.get $u) (local.get $j))))))
            (f64.store (i32.add (local.get $p) (local.get $j))
              (f64.add (f64.load (i32.add (local.get $p) (local.get $j)))
                (f64.add (f64.mul (f64.load (i32.add (local.get $row0) (local.get $j))) (local.get $f0))
                         (f64.mul (f64.load (i32.add (local.get $row1) (local.get $j))) (local.get $f1)))))))
        ;; the 2×2 diagonal block [B[r,r] ·; B[r+1,r] B[r+1,r+1]]
        (local.set $a10 (f64.load (i32.add (local.get $row1) (i32.shl (local.get $r) (i32.const 3)))))
        (local.set $j (i32.add (local.get $p) (i32.shl (local.get $r) (i32.const 3))))
        (f64.store (local.get $j)
          (f64.add (f64.load (local.get $j))
            (f64.add (local.get $t0)
              (f64.add (f64.mul (f64.load (i32.add (local.get $row0) (i32.shl (local.get $r) (i32.const 3)))) (local.get $f0))
                       (f64.mul (local.get $a10) (local.get $f1))))))
        (f64.store offset=8 (local.get $j)
          (f64.add (f64.load offset=8 (local.get $j))
            (f64.add (local.get $t1)
              (f64.add (f64.mul (local.get $a10) (local.get $f0))
                       (f64.mul (f64.load offset=8 (i32.add (local.get $row1) (i32.shl (local.get $r) (i32.const 3)))) (local.get $f1))))))
        (local.set $r (i32.add (local.get $r) (i32.const 2)))
        (br $pairs)))
    ;; a last single row when m is odd
    (if (i32.lt_s (local.get $r) (local.get $m))
      (then
        (local.set $row0 (i32.add (local.get $a) (i32.shl (i32.mul (local.get $r) (i32.add (local.get $r) (i32.const 1))) (i32.const 2))))
        (local.set $f0 (f64.load (i32.add (local.get $u) (i32.shl (local.get $r) (i32.const 3)))))
        (local.set $t0 (call $dot (local.get $row0) (local.get $u) (local.get $r)))
        (call $axpy (local.get $p) (local.get $row0) (local.get $r) (f64.neg (local.get $f0)))
        (local.set $j (i32.add (local.get $p) (i32.shl (local.get $r) (i32.const 3))))
        (f64.store (local.get $j)
          (f64.add (f64.load (local.get $j))
            (f64.add (local.get $t0) (f64.mul (f64.load (i32.add (local.get $row0) (i32.shl (local.get $r) (i32.const 3)))) (local.get $f0))))))))

  ;; One register tile of C ← C − A·B: 3 rows × 6 columns, k = 0, 1, … in order, with
  ;;   A[t, k] at $a + 8t + k·$aStep (broadcast), B[k, j] at $b + k·$bStep + 8j,
  ;;   C[t, j] at $c (t = 0), $c1 (t = 1), $c2 (t = 2) plus 8j (only t < $rows and
  ;;   j < $cols + t written — a triangle's diagonal tile — all read).
  (func $tile (param $a i32) (param $aStep i32) (param $b i32) (param $bStep i32) (param $k i32)
    (param $c i32) (param $c1 i32) (param $c2 i32) (param $rows i32) (param $cols i32)
    (local $b0 v128) (local $b1 v128) (local $b2 v128) (local $s v128)
    (local $x00 v128) (local $x01 v128) (local $x02 v128)
    (local $x10 v128) (local $x11 v128) (local $x12 v128)
    (local $x20 v128) (local $x21 v128) (local $x22 v128)
    (local.set $x00 (v128.load offset=0 (local.get $c)))
    (local.set $x01 (v128.load offset=16 (local.get $c)))
    (local.set $x02 (v128.load offset=32 (local.get $c)))
    (local.set $x10 (v128.load offset=0 (local.get $c1)))
    (local.set $x11 (v128.load offset=16 (local.get $c1)))
    (local.set $x12 (v128.load offset=32 (local.get $c1)))
    (local.set $x20 (v128.load offset=0 (local.get $c2)))
    (local.set $x21 (v128.load offset=16 (local.get $c2)))
    (local.set $x22 (v128.load offset=32 (local.get $c2)))
    (block $done
      (br_if $done (i32.le_s (local.get $k) (i32.const 0)))
      (loop $next
        (local.set $b0 (v128.load offset=0 (local.get $b)))
        (local.set $b1 (v128.load offset=16 (local.get $b)))
        (local.set $b2 (v128.load offset=32 (local.get $b)))
        (local.set $s (v128.load64_splat offset=0 (local.get $a)))
        (local.set $x00 (f64x2.sub (local.get $x00) (f64x2.mul (local.get $b0) (local.get $s))))
        (local.set $x01 (f64x2.sub (local.get $x01) (f64x2.mul (local.get $b1) (local.get $s))))
        (local.set $x02 (f64x2.sub (local.get $x02) (f64x2.mul (local.get $b2) (local.get $s))))
        (local.set $s (v128.load64_splat offset=8 (local.get $a)))
        (local.set $x10 (f64x2.sub (local.get $x10) (f64x2.mul (local.get $b0) (local.get $s))))
        (local.set $x11 (f64x2.sub (local.get $x11) (f64x2.mul (local.get $b1) (local.get $s))))
        (local.set $x12 (f64x2.sub (local.get $x12) (f64x2.mul (local.get $b2) (local.get $s))))
        (local.set $s (v128.load64_splat offset=16 (local.get $a)))
        (local.set $x20 (f64x2.sub (local.get $x20) (f64x2.mul (local.get $b0) (local.get $s))))
        (local.set $x21 (f64x2.sub (local.get $x21) (f64x2.mul (local.get $b1) (local.get $s))))
        (local.set $x22 (f64x2.sub (local.get $x22) (f64x2.mul (local.get $b2) (local.get $s))))
        (local.set $a (i32.add (local.get $a) (local.get $aStep)))
        (local.set $b (i32.add (local.get $b) (local.get $bStep)))
        (br_if $next (local.tee $k (i32.sub (local.get $k) (i32.const 1))))))
    ;; staged first (values live across a call would be spilled inside the loop)
    (v128.store offset=64 (i32.const 0) (local.get $x00))
    (v128.store offset=80 (i32.const 0) (local.get $x01))
    (v128.store offset=96 (i32.const 0) (local.get $x02))
    (v128.store offset=112 (i32.const 0) (local.get $x10))
    (v128.store offset=128 (i32.const 0) (local.get $x11))
    (v128.store offset=144 (i32.const 0) (local.get $x12))
    (v128.store offset=160 (i32.const 0) (local.get $x20))
    (v128.store offset=176 (i32.const 0) (local.get $x21))
    (v128.store offset=192 (i32.const 0) (local.get $x22))
    (call $flush (i32.const 64) (local.get $c) (local.get $cols))
    (if (i32.ge_s (local.get $rows) (i32.const 2)) (then (call $flush (i32.const 112) (local.get $c1) (i32.add (local.get $cols) (i32.const 1)))))
    (if (i32.ge_s (local.get $rows) (i32.const 3)) (then (call $flush (i32.const 160) (local.get $c2) (i32.add (local.get $cols) (i32.const 2))))))

  ;; Writes columns j < $cols of one staged tile row at $s to $c.
  (func $flush (param $s i32) (param $c i32) (param $cols i32)
    (local $j i32)
      (if (i32.ge_s (local.get $cols) (i32.const 6))
        (then
          (v128.store offset=0 (local.get $c) (v128.load offset=0 (local.get $s)))
          (v128.store offset=16 (local.get $c) (v128.load offset=16 (local.get $s)))
          (v128.store offset=32 (local.get $c) (v128.load offset=32 (local.get $s))))
        (else
          (local.set $j (i32.const 0))
          (block $cols_done
            (loop $cols_loop
              (br_if $cols_done (i32.ge_s (local.get $j) (local.get $cols)))
              (f64.store (i32.add (local.get $c) (i32.shl (local.get $j) (i32.const 3)))
                (f64.load (i32.add (local.get $s) (i32.shl (local.get $j) (i32.const 3)))))
              (local.set $j (i32.add (local.get $j) (i32.const 1)))
              (br $cols_loop))))))

  ;; Copies `count` vectors (rows of stride $vStride bytes at $src, entries 0..$m−1) into
  ;; $dst as blocks of $w consecutive entries, k-major inside a block: entry j of vector k goes to
  ;; $dst + (j div $w)·8·$w·count + 8·$w·k + 8·(j mod $w); $blocks blocks, entries past $m
  ;; zero. A tile then reads its operand as one sequential stream instead of `count` rows
  ;; $vStride apart (a stride of a power-of-two-ish number of bytes puts every row in the same
  ;; few L1 sets; packing is O(count·m) against the update's O(count·m²)).
  (func $pack (param $dst i32) (param $src i32) (param $vStride i32) (param $count i32) (param $m i32) (param $w i32) (param $blocks i32)
    (local $k i32) (local $blk i32) (local $t i32) (local $j i32) (local $out i32) (local $blockBytes i32)
    (local.set $blockBytes (i32.mul (i32.shl (local.get $w) (i32.const 3)) (local.get $count)))
    (block $k_done
      (loop $k_loop
        (br_if $k_done (i32.ge_s (local.get $k) (local.get $count)))
        (local.set $blk (i32.const 0))
        (local.set $j (i32.const 0))
        (local.set $out (i32.add (local.get $dst) (i32.mul (i32.shl (local.get $w) (i32.const 3)) (local.get $k))))
        (block $b_done
          (loop $b_loop
            (br_if $b_done (i32.ge_s (local.get $blk) (local.get $blocks)))
            (local.set $t (i32.const 0))
            (loop $t_loop
              (f64.store (i32.add (local.get $out) (i32.shl (local.get $t) (i32.const 3)))
                (select
                  (f64.load (i32.add (local.get $src) (i32.shl (select (local.get $j) (i32.const 0) (i32.lt_s (local.get $j) (local.get $m))) (i32.const 3))))
                  (f64.const 0)
                  (i32.lt_s (local.get $j) (local.get $m))))
              (local.set $j (i32.add (local.get $j) (i32.const 1)))
              (br_if $t_loop (i32.lt_s (local.tee $t (i32.add (local.get $t) (i32.const 1))) (local.get $w))))
            (local.set $out (i32.add (local.get $out) (local.get $blockBytes)))
            (local.set $blk (i32.add (local.get $blk) (i32.const 1)))
            (br $b_loop)))
        (local.set $src (i32.add (local.get $src) (local.get $vStride)))
        (local.set $k (i32.add (local.get $k) (i32.const 1)))
        (br $k_loop))))

  ;; Low-rank update of the lower triangle of the leading m×m block of A (packed as in symv):
  ;; A[r, j] ← A[r, j] − Σ_{k<count} X[k, r]·Y[k, j] for j ≤ r < m, where X and Y hold `count`
  ;; vectors as rows of stride $vStride bytes. With X = [U; Q] and Y = [Q; U] stacked this is
  ;; the rank-2k update A − U Qᵀ − Q Uᵀ in one pass of 2k terms per entry. Tiles of 3 rows × 6
  ;; columns cover the lower triangle (diagonal tiles also write a few entries above it, which
  ;; the solver never reads). X and Y are first packed at $work (see $pack: X in blocks of 3
  ;; rows, then Y in blocks of 6 columns; 8·count·(2m + 12) bytes), so every tile streams its
  ;; operands from consecutive memory; each entry's terms are subtracted in the same order as
  ;; from the unpacked rows, so the packing changes no bit.
  (func (export "syr2k") (param $a i32) (param $m i32) (param $x i32) (param $y i32) (param $vStride i32) (param $count i32) (param $work i32)
    (local $r i32) (local $j i32) (local $rows i32) (local $cols i32) (local $row0 i32) (local $row1 i32) (local $row2 i32)
    (local $xp i32) (local $yp i32) (local $xBlocks i32) (local $yBlocks i32)
    ;; row blocks of 3 cover r < m; column blocks of 6 cover j ≤ m + 1 (the last row block's reach)
    (local.set $xBlocks (i32.div_u (i32.add (local.get $m) (i32.const 2)) (i32.const 3)))
    (local.set $yBlocks (i32.add (i32.div_u (i32.add (local.get $m) (i32.const 1)) (i32.const 6)) (i32.const 1)))
    (local.set $yp (i32.add (local.get $work) (i32.mul (i32.mul (local.get $xBlocks) (i32.const 24)) (local.get $count))))
    (call $pack (local.get $work) (local.get $x) (local.get $vStride) (local.get $count) (local.get $m) (i32.const 3) (local.get $xBlocks))
    (call $pack (local.get $yp) (local.get $y) (local.get $vStride) (local.get $count) (local.get $m) (i32.const 6) (local.get $yBlocks))
    (local.set $xp (local.get $work))
    (block $done
      (loop $row_blocks
        (br_if $done (i32.ge_s (local.get $r) (local.get $m)))
        (local.set $rows (select (i32.const 3) (i32.sub (local.get $m) (local.get $r)) (i32.ge_s (i32.sub (local.get $m) (local.get $r)) (i32.const 3))))
        (local.set $row0 (i32.add (local.get $a) (i32.shl (i32.mul (local.get $r) (i32.add (local.get $r) (i32.const 1))) (i32.const 2))))
        (local.set $row1 (i32.add (local.get $row0) (i32.shl (i32.add (local.get $r) (i32.const 1)) (i32.const 3))))
        (local.set $row2 (i32.add (local.get $row1) (i32.shl (i32.add (local.get $r) (i32.const 2)) (i32.const 3))))
        (local.set $j (i32.const 0))
        (block $cols_done
          (loop $col_blocks
            (br_if $cols_done (i32.gt_s (local.get $j) (i32.add (local.get $r) (i32.const 2))))
            ;; row r + t takes columns j ≤ r + t: $cols + t of them, $cols = r + 1 − j
            (local.set $cols (i32.sub (i32.add (local.get $r) (i32.const 1)) (local.get $j)))
            (call $tile
              (local.get $xp) (i32.const 24)
              (i32.add (local.get $yp) (i32.mul (i32.mul (local.get $j) (i32.const 8)) (local.get $count))) (i32.const 48)
              (local.get $count)
              (i32.add (local.get $row0) (i32.shl (local.get $j) (i32.const 3)))
              (i32.add (local.get $row1) (i32.shl (local.get $j) (i32.const 3)))
              (i32.add (local.get $row2) (i32.shl (local.get $j) (i32.const 3)))
              (local.get $rows) (local.get $cols))
            (local.set $j (i32.add (local.get $j) (i32.const 6)))
            (br $col_blocks)))
        (local.set $xp (i32.add (local.get $xp) (i32.mul (local.get $count) (i32.const 24))))
        (local.set $r (i32.add (local.get $r) (i32.const 3)))
        (br $row_blocks))))

  ;; (a[k], b[k]) ← (c·a[k] − s·b[k], s·a[k] + c·b[k]) for k < len: a Givens rotation of two rows.
  (func $rot (export "rot") (param $a i32) (param $b i32) (param $len i32) (param $c f64) (param $s f64)
    (local $cc v128) (local $ss v128) (local $x v128) (local $y v128) (local $end i32) (local $xs f64) (local $ys f64)
    (local.set $cc (f64x2.splat (local.get $c)))
    (local.set $ss (f64x2.splat (local.get $s)))
    (local.set $end (i32.add (local.get $a) (i32.shl (i32.and (local.get $len) (i32.const -2)) (i32.const 3))))
    (block $done
      (loop $pairs
        (br_if $done (i32.ge_u (local.get $a) (local.get $end)))
        (local.set $x (v128.load (local.get $a)))
        (local.set $y (v128.load (local.get $b)))
        (v128.store (local.get $b) (f64x2.add (f64x2.mul (local.get $ss) (local.get $x)) (f64x2.mul (local.get $cc) (local.get $y))))
        (v128.store (local.get $a) (f64x2.sub (f64x2.mul (local.get $cc) (local.get $x)) (f64x2.mul (local.get $ss) (local.get $y))))
        (local.set $a (i32.add (local.get $a) (i32.const 16)))
        (local.set $b (i32.add (local.get $b) (i32.const 16)))
        (br $pairs)))
    (if (i32.and (local.get $len) (i32.const 1))
      (then
        (local.set $xs (f64.load (local.get $a)))
        (local.set $ys (f64.load (local.get $b)))
        (f64.store (local.get $b) (f64.add (f64.mul (local.get $s) (local.get $xs)) (f64.mul (local.get $c) (local.get $ys))))
        (f64.store (local.get $a) (f64.sub (f64.mul (local.get $c) (local.get $xs)) (f64.mul (local.get $s) (local.get $ys)))))))

  ;; The rotations of one QL sweep, applied together: for i = hi down to lo, $rot on rows i and
  ;; i + 1 of the matrix at $z (row stride $stride bytes, $cols entries) with c[i], s[i].
  (func (export "rotSweep") (param $z i32) (param $stride i32) (param $cols i32) (param $c i32) (param $s i32) (param $lo i32) (param $hi i32)
    (local $i i32) (local $row i32)
    (local.set $i (local.get $hi))
    (block $done
      (loop $rows
        (br_if $done (i32.lt_s (local.get $i) (local.get $lo)))
        (local.set $row (i32.add (local.get $z) (i32.mul (local.get $i) (local.get $stride))))
        (call $rot (local.get $row) (i32.add (local.get $row) (local.get $stride)) (local.get $cols)
          (f64.load (i32.add (local.get $c) (i32.shl (local.get $i) (i32.const 3))))
          (f64.load (i32.add (local.get $s) (i32.shl (local.get $i) (i32.const 3)))))
        (local.set $i (i32.sub (local.get $i) (i32.const 1)))
        (br $rows))))

  ;; v ← v − u·(uᵀv)/h over len entries: one Householder reflection of one vector.
  (func (export "reflect") (param $u i32) (param $v i32) (param $len i32) (param $h f64)
    (call $axpy (local.get $v) (local.get $u) (local.get $len)
      (f64.div (call $dot (local.get $u) (local.get $v) (local.get $len)) (local.get $h)))))
