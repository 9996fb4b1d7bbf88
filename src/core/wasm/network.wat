;; Matrix kernels of the dense network (src/core/model/network.ts) in WebAssembly SIMD.
;;
;; Every kernel computes the same sums as the plain-JavaScript loops of
;; src/core/model/kernels-js.ts, with each output's terms added in the same order and every
;; product rounded before its addition (f64x2.mul then f64x2.add: no fused multiply-add).
;; Two neighbouring outputs share one f64x2 register, so vectorizing never reorders a sum and
;; the results are bit-identical to the scalar path in every engine.
;;
;; assemble.mjs also derives the readout-only module `networkFused` from this text: each
;; accumulating multiply-add, written on one line as (local.set $x (f64x2.add (local.get $x)
;; (f64x2.mul A B))), becomes (f64x2.relaxed_madd A B (local.get $x)), and the memory is
;; imported from an instance of this module. Keep that one-line form for every such update.
;;
;; All pointers are byte addresses into the exported memory. Matrices are row-major. Bytes
;; 0..63 hold zeros (a zero starting tile) and 64..207 stage a finished tile; callers use
;; memory from byte 256 on.
;; Partial tiles at the right and bottom edges read (never write) up to two rows and six
;; columns past an operand's end: the caller leaves that much slack after every buffer.

(module
  (memory (export "memory") 1)

  ;; Stores lane 0 (cnt = 1) or both lanes (cnt >= 2) of $v at $p; with $add, adds the stored
  ;; value first (p + v, the order of the scalar `dst[k] += s`). Nothing when cnt <= 0.
  (func $put (param $p i32) (param $v v128) (param $cnt i32) (param $add i32)
    (if (i32.ge_s (local.get $cnt) (i32.const 2))
      (then
        (if (local.get $add)
          (then (local.set $v (f64x2.add (v128.load (local.get $p)) (local.get $v)))))
        (v128.store (local.get $p) (local.get $v))
        (return)))
    (if (i32.eq (local.get $cnt) (i32.const 1))
      (then
        (if (local.get $add)
          (then (local.set $v (f64x2.add (v128.load64_zero (local.get $p)) (local.get $v)))))
        (v128.store64_lane 0 (local.get $p) (local.get $v)))))

  ;; One register tile of a matrix product: C[t, j] (=|+=) I[t, j] + Σ_k A[t, k]·B[k, j] for
  ;; t < 3 rows and j < 6 columns, k = 0, 1, … in order, where
  ;;   A[t, k] = f64 at $a + t·$aRow + k·$aStep   (broadcast to both lanes)
  ;;   B[k, j] = f64 at $b + k·$bStep + 8·j        (two columns per load)
  ;;   I[t, j] = f64 at $i + t·$iRow + 8·j         (the starting value of each sum)
  ;;   C[t, j] = f64 at $c + t·$cRow + 8·j         (only t < $rows, j < $cols are written)
  ;; Nine accumulators of two lanes each stay in registers for the whole k loop.
  ;; (Exported so the benchmark can time this very tile on operands in the L1 cache: the
  ;; engine's attainable rate for this mix of f64x2 loads, multiplies and adds.)
  (func $tile (export "tile")
    (param $a i32) (param $aRow i32) (param $aStep i32)
    (param $b i32) (param $bStep i32) (param $k i32)
    (param $i i32) (param $iRow i32)
    (param $c i32) (param $cRow i32) (param $rows i32) (param $cols i32) (param $add i32)
    (local $a1 i32) (local $a2 i32) (local $i1 i32) (local $i2 i32)
    (local $b0 v128) (local $b1 v128) (local $b2 v128) (local $s v128)
    (local $x00 v128) (local $x01 v128) (local $x02 v128)
    (local $x10 v128) (local $x11 v128) (local $x12 v128)
    (local $x20 v128) (local $x21 v128) (local $x22 v128)
    (local.set $a1 (i32.add (local.get $a) (local.get $aRow)))
    (local.set $a2 (i32.add (local.get $a1) (local.get $aRow)))
    (local.set $i1 (i32.add (local.get $i) (local.get $iRow)))
    (local.set $i2 (i32.add (local.get $i1) (local.get $iRow)))
    (local.set $x00 (v128.load offset=0 (local.get $i)))
    (local.set $x01 (v128.load offset=16 (local.get $i)))
    (local.set $x02 (v128.load offset=32 (local.get $i)))
    (local.set $x10 (v128.load offset=0 (local.get $i1)))
    (local.set $x11 (v128.load offset=16 (local.get $i1)))
    (local.set $x12 (v128.load offset=32 (local.get $i1)))
    (local.set $x20 (v128.load offset=0 (local.get $i2)))
    (local.set $x21 (v128.load offset=16 (local.get $i2)))
    (local.set $x22 (v128.load offset=32 (local.get $i2)))
    (block $done
      (br_if $done (i32.le_s (local.get $k) (i32.const 0)))
      (loop $next
        (local.set $b0 (v128.load offset=0 (local.get $b)))
        (local.set $b1 (v128.load offset=16 (local.get $b)))
        (local.set $b2 (v128.load offset=32 (local.get $b)))
        (local.set $s (v128.load64_splat (local.get $a)))
        (local.set $x00 (f64x2.add (local.get $x00) (f64x2.mul (local.get $b0) (local.get $s))))
        (local.set $x01 (f64x2.add (local.get $x01) (f64x2.mul (local.get $b1) (local.get $s))))
        (local.set $x02 (f64x2.add (local.get $x02) (f64x2.mul (local.get $b2) (local.get $s))))
        (local.set $s (v128.load64_splat (local.get $a1)))
        (local.set $x10 (f64x2.add (local.get $x10) (f64x2.mul (local.get $b0) (local.get $s))))
        (local.set $x11 (f64x2.add (local.get $x11) (f64x2.mul (local.get $b1) (local.get $s))))
        (local.set $x12 (f64x2.add (local.get $x12) (f64x2.mul (local.get $b2) (local.get $s))))
        (local.set $s (v128.load64_splat (local.get $a2)))
        (local.set $x20 (f64x2.add (local.get $x20) (f64x2.mul (local.get $b0) (local.get $s))))
        (local.set $x21 (f64x2.add (local.get $x21) (f64x2.mul (local.get $b1) (local.get $s))))
        (local.set $x22 (f64x2.add (local.get $x22) (f64x2.mul (local.get $b2) (local.get $s))))
        (local.set $a (i32.add (local.get $a) (local.get $aStep)))
        (local.set $a1 (i32.add (local.get $a1) (local.get $aStep)))
        (local.set $a2 (i32.add (local.get $a2) (local.get $aStep)))
        (local.set $b (i32.add (local.get $b) (local.get $bStep)))
        (br_if $next (local.tee $k (i32.sub (local.get $k) (i32.const 1))))))
    ;; A full tile is stored straight to C (p + v when adding, as $put): with a short k loop
    ;; (a last layer of ten units) staging and nine $put calls cost as much as the products.
    (if (i32.and (i32.eq (local.get $rows) (i32.const 3)) (i32.eq (local.get $cols) (i32.const 6)))
      (then
        (local.set $a1 (i32.add (local.get $c) (local.get $cRow)))
        (local.set $a2 (i32.add (local.get $a1) (local.get $cRow)))
        (if (local.get $add)
          (then
            (local.set $x00 (f64x2.add (v128.load offset=0 (local.get $c)) (local.get $x00)))
            (local.set $x01 (f64x2.add (v128.load offset=16 (local.get $c)) (local.get $x01)))
            (local.set $x02 (f64x2.add (v128.load offset=32 (local.get $c)) (local.get $x02)))
            (local.set $x10 (f64x2.add (v128.load offset=0 (local.get $a1)) (local.get $x10)))
            (local.set $x11 (f64x2.add (v128.load offset=16 (local.get $a1)) (local.get $x11)))
            (local.set $x12 (f64x2.add (v128.load offset=32 (local.get $a1)) (local.get $x12)))
            (local.set $x20 (f64x2.add (v128.load offset=0 (local.get $a2)) (local.get $x20)))
            (local.set $x21 (f64x2.add (v128.load offset=16 (local.get $a2)) (local.get $x21)))
            (local.set $x22 (f64x2.add (v128.load offset=32 (local.get $a2)) (local.get $x22)))))
        (v128.store offset=0 (local.get $c) (local.get $x00))
        (v128.store offset=16 (local.get $c) (local.get $x01))
        (v128.store offset=32 (local.get $c) (local.get $x02))
        (v128.store offset=0 (local.get $a1) (local.get $x10))
        (v128.store offset=16 (local.get $a1) (local.get $x11))
        (v128.store offset=32 (local.get $a1) (local.get $x12))
        (v128.store offset=0 (local.get $a2) (local.get $x20))
        (v128.store offset=16 (local.get $a2) (local.get $x21))
        (v128.store offset=32 (local.get $a2) (local.get $x22))
        (return)))
    ;; A partial tile goes through the staging area: values live across a call would be
    ;; spilled inside the loop by the engine's register allocator (measured: half the speed).
    (v128.store offset=64 (i32.const 0) (local.get $x00))
    (v128.store offset=80 (i32.const 0) (local.get $x01))
    (v128.store offset=96 (i32.const 0) (local.get $x02))
    (v128.store offset=112 (i32.const 0) (local.get $x10))
    (v128.store offset=128 (i32.const 0) (local.get $x11))
    (v128.store offset=144 (i32.const 0) (local.get $x12))
    (v128.store offset=160 (i32.const 0) (local.get $x20))
    (v128.store offset=176 (i32.const 0) (local.get $x21))
    (v128.store offset=192 (i32.const 0) (local.get $x22))
    (call $flush (local.get $c) (local.get $cRow) (local.get $rows) (local.get $cols) (local.get $add)))

  ;; Writes rows t < $rows, columns j < $cols of the 3×6 tile staged at bytes 64..207 to
  ;; $c + t·$cRow + 8·j (see $put for $add).
  (func $flush (param $c i32) (param $cRow i32) (param $rows i32) (param $cols i32) (param $add i32)
    (local $t i32) (local $s i32)
    (local.set $s (i32.const 64))
    (loop $rows_loop
      (call $put (local.get $c) (v128.load (local.get $s)) (local.get $cols) (local.get $add))
      (call $put (i32.add (local.get $c) (i32.const 16)) (v128.load offset=16 (local.get $s)) (i32.sub (local.get $cols) (i32.const 2)) (local.get $add))
      (call $put (i32.add (local.get $c) (i32.const 32)) (v128.load offset=32 (local.get $s)) (i32.sub (local.get $cols) (i32.const 4)) (local.get $add))
      (local.set $c (i32.add (local.get $c) (local.get $cRow)))
      (local.set $s (i32.add (local.get $s) (i32.const 48)))
      (br_if $rows_loop (i32.lt_s (local.tee $t (i32.add (local.get $t) (i32.const 1))) (local.get $rows)))))

  (func $min (param $x i32) (param $y i32) (result i32)
    (select (local.get $x) (local.get $y) (i32.lt_s (local.get $x) (local.get $y))))

  ;; dst[r, o] (=|+=) (bias[o] or 0) + Σ_i W[o, i]·x[r, i], i in order, for r < n, o < units.
  ;; W is units×fanIn at $w; bias at $bias is read only when flags bit 0 is set; flags bit 1
  ;; adds the sum to dst (dst + s). $pack is scratch of (fanIn + 1)·U entries, U = units
  ;; rounded up to a multiple of 6: Wᵀ in panels of six columns, each panel contiguous —
  ;; row 0 of a panel the bias (or zeros), row 1 + i column i of W (zeros past units) — so a
  ;; tile reads its panel sequentially (strided rows of W alias in the cache). Panels are the
  ;; outer loop: one stays in cache while the rows of x stream past.
  (func (export "dense")
    (param $w i32) (param $bias i32) (param $x i32) (param $n i32) (param $fanIn i32) (param $units i32)
    (param $dst i32) (param $flags i32) (param $pack i32)
    (local $u i32) (local $o i32) (local $i i32) (local $r i32) (local $q i32) (local $panel i32)
    (local.set $u (i32.mul (i32.div_u (i32.add (local.get $units) (i32.const 5)) (i32.const 6)) (i32.const 6)))
    ;; panel (o / 6) starts at $pack + 48·(fanIn + 1)·(o / 6); entry (row, o mod 6)
    (local.set $o (i32.const 0))
    (loop $cols
      (local.set $q (i32.add
        (i32.add (local.get $pack) (i32.mul (i32.div_u (local.get $o) (i32.const 6)) (i32.mul (i32.const 48) (i32.add (local.get $fanIn) (i32.const 1)))))
        (i32.shl (i32.rem_u (local.get $o) (i32.const 6)) (i32.const 3))))
      (f64.store (local.get $q)
        (if (result f64) (i32.and (i32.and (local.get $flags) (i32.const 1)) (i32.lt_u (local.get $o) (local.get $units)))
          (then (f64.load (i32.add (local.get $bias) (i32.shl (local.get $o) (i32.const 3)))))
          (else (f64.const 0))))
      (local.set $i (i32.const 0))
      (loop $rows
        (local.set $q (i32.add (local.get $q) (i32.const 48)))
        (f64.store (local.get $q)
          (if (result f64) (i32.lt_u (local.get $o) (local.get $units))
            (then (f64.load (i32.add (local.get $w) (i32.shl (i32.add (i32.mul (local.get $o) (local.get $fanIn)) (local.get $i)) (i32.const 3)))))
            (else (f64.const 0))))
        (br_if $rows (i32.lt_u (local.tee $i (i32.add (local.get $i) (i32.const 1))) (local.get $fanIn))))
      (br_if $cols (i32.lt_u (local.tee $o (i32.add (local.get $o) (i32.const 1))) (local.get $u))))
    (local.set $r (i32.const 0))
    (loop $row_blocks
      (local.set $o (i32.const 0))
      (local.set $panel (local.get $pack))
      (loop $panels
        (call $tile
          (i32.add (local.get $x) (i32.shl (i32.mul (local.get $r) (local.get $fanIn)) (i32.const 3)))
          (i32.shl (local.get $fanIn) (i32.const 3))
          (i32.const 8)
          (i32.add (local.get $panel) (i32.const 48))
          (i32.const 48)
          (local.get $fanIn)
          (local.get $panel)
          (i32.const 0)
          (i32.add (local.get $dst) (i32.shl (i32.add (i32.mul (local.get $r) (local.get $units)) (local.get $o)) (i32.const 3)))
          (i32.shl (local.get $units) (i32.const 3))
          (call $min (i32.sub (local.get $n) (local.get $r)) (i32.const 3))
          (call $min (i32.sub (local.get $units) (local.get $o)) (i32.const 6))
          (i32.and (local.get $flags) (i32.const 2)))
        (local.set $panel (i32.add (local.get $panel) (i32.mul (i32.const 48) (i32.add (local.get $fanIn) (i32.const 1)))))
        (br_if $panels (i32.lt_u (local.tee $o (i32.add (local.get $o) (i32.const 6))) (local.get $units))))
      (br_if $row_blocks (i32.lt_u (local.tee $r (i32.add (local.get $r) (i32.const 3))) (local.get $n)))))

  ;; Copies columns [col, col + width) of the rows×stride matrix at $src (zeros past $cols) into
  ;; a rows×width panel at $dst, row after row: the panel a tile reads sequentially.
  (func $panel (param $src i32) (param $rows i32) (param $stride i32) (param $cols i32) (param $col i32) (param $width i32) (param $dst i32)
    (local $r i32) (local $j i32) (local $p i32) (local $step i32)
    ;; Whole panels of six or three columns move as f64x2 pairs (a copy: same bits).
    (if (i32.le_u (i32.add (local.get $col) (local.get $width)) (local.get $cols))
      (then
        (local.set $p (i32.add (local.get $src) (i32.shl (local.get $col) (i32.const 3))))
        (local.set $step (i32.shl (local.get $stride) (i32.const 3)))
        (if (i32.eq (local.get $width) (i32.const 6))
          (then
            (loop $six
              (v128.store offset=0 (local.get $dst) (v128.load offset=0 (local.get $p)))
              (v128.store offset=16 (local.get $dst) (v128.load offset=16 (local.get $p)))
              (v128.store offset=32 (local.get $dst) (v128.load offset=32 (local.get $p)))
              (local.set $p (i32.add (local.get $p) (local.get $step)))
              (local.set $dst (i32.add (local.get $dst) (i32.const 48)))
              (br_if $six (i32.lt_u (local.tee $r (i32.add (local.get $r) (i32.const 1))) (local.get $rows))))
            (return)))
        (if (i32.eq (local.get $width) (i32.const 3))
          (then
            (loop $three
              (v128.store offset=0 (local.get $dst) (v128.load offset=0 (local.get $p)))
              (f64.store offset=16 (local.get $dst) (f64.load offset=16 (local.get $p)))
              (local.set $p (i32.add (local.get $p) (local.get $step)))
              (local.set $dst (i32.add (local.get $dst) (i32.const 24)))
              (br_if $three (i32.lt_u (local.tee $r (i32.add (local.get $r) (i32.const 1))) (local.get $rows))))
            (return)))))
    (loop $rows_loop
      (local.set $p (i32.add (local.get $src) (i32.shl (i32.add (i32.mul (local.get $r) (local.get $stride)) (local.get $col)) (i32.const 3))))
      (local.set $j (i32.const 0))
      (loop $cols_loop
        (f64.store (local.get $dst)
          (if (result f64) (i32.lt_u (i32.add (local.get $col) (local.get $j)) (local.get $cols))
            (then (f64.load (i32.add (local.get $p) (i32.shl (local.get $j) (i32.const 3)))))
            (else (f64.const 0))))
        (local.set $dst (i32.add (local.get $dst) (i32.const 8)))
        (br_if $cols_loop (i32.lt_u (local.tee $j (i32.add (local.get $j) (i32.const 1))) (local.get $width))))
      (br_if $rows_loop (i32.lt_u (local.tee $r (i32.add (local.get $r) (i32.const 1))) (local.get $rows)))))

  ;; g[o, i] += Σ_r d[r, o]·x[r, i], r in order, for o < units, i < fanIn (g units×fanIn,
  ;; d n×units, x n×fanIn). Rows go in chunks of 256; each chunk's x is packed into panels of
  ;; six columns and its d into panels of three, so every tile reads two short sequential
  ;; panels, and each chunk continues the sums the previous one stored. $pack holds
  ;; 256·(F + O) entries, F = fanIn rounded up to a multiple of 6, O = units up to one of 3.
  (func (export "outer")
    (param $g i32) (param $d i32) (param $x i32) (param $n i32) (param $fanIn i32) (param $units i32) (param $pack i32)
    (local $r i32) (local $kc i32) (local $i i32) (local $o i32) (local $gp i32) (local $dpack i32) (local $f i32)
    (local.set $f (i32.mul (i32.div_u (i32.add (local.get $fanIn) (i32.const 5)) (i32.const 6)) (i32.const 6)))
    (local.set $dpack (i32.add (local.get $pack) (i32.shl (i32.mul (i32.const 256) (local.get $f)) (i32.const 3))))
    (loop $chunks
      (local.set $kc (call $min (i32.sub (local.get $n) (local.get $r)) (i32.const 256)))
      (local.set $i (i32.const 0))
      (loop $xpanels
        (call $panel
          (i32.add (local.get $x) (i32.shl (i32.mul (local.get $r) (local.get $fanIn)) (i32.const 3)))
          (local.get $kc) (local.get $fanIn) (local.get $fanIn) (local.get $i) (i32.const 6)
          (i32.add (local.get $pack) (i32.mul (local.get $i) (i32.shl (local.get $kc) (i32.const 3)))))
        (br_if $xpanels (i32.lt_u (local.tee $i (i32.add (local.get $i) (i32.const 6))) (local.get $fanIn))))
      (local.set $o (i32.const 0))
      (loop $dpanels
        (call $panel
          (i32.add (local.get $d) (i32.shl (i32.mul (local.get $r) (local.get $units)) (i32.const 3)))
          (local.get $kc) (local.get $units) (local.get $units) (local.get $o) (i32.const 3)
          (i32.add (local.get $dpack) (i32.mul (local.get $o) (i32.shl (local.get $kc) (i32.const 3)))))
        (br_if $dpanels (i32.lt_u (local.tee $o (i32.add (local.get $o) (i32.const 3))) (local.get $units))))
      (local.set $i (i32.const 0))
      (loop $in_cols
        (local.set $o (i32.const 0))
        (loop $out_rows
          (local.set $gp (i32.add (local.get $g) (i32.shl (i32.add (i32.mul (local.get $o) (local.get $fanIn)) (local.get $i)) (i32.const 3))))
          (call $tile
            (i32.add (local.get $dpack) (i32.mul (local.get $o) (i32.shl (local.get $kc) (i32.const 3))))
            (i32.const 8)
            (i32.const 24)
            (i32.add (local.get $pack) (i32.mul (local.get $i) (i32.shl (local.get $kc) (i32.const 3))))
            (i32.const 48)
            (local.get $kc)
            (local.get $gp)
            (i32.shl (local.get $fanIn) (i32.const 3))
            (local.get $gp)
            (i32.shl (local.get $fanIn) (i32.const 3))
            (call $min (i32.sub (local.get $units) (local.get $o)) (i32.const 3))
            (call $min (i32.sub (local.get $fanIn) (local.get $i)) (i32.const 6))
            (i32.const 0))
          (br_if $out_rows (i32.lt_u (local.tee $o (i32.add (local.get $o) (i32.const 3))) (local.get $units))))
        (br_if $in_cols (i32.lt_u (local.tee $i (i32.add (local.get $i) (i32.const 6))) (local.get $fanIn))))
      (br_if $chunks (i32.lt_u (local.tee $r (i32.add (local.get $r) (local.get $kc))) (local.get $n)))))

  ;; gb[o] += Σ_r d[r, o], r in order, for o < units (the bias part of the outer product).
  ;; Rows are the outer loop, so d is read once, in order, while gb (one row) stays in the L1
  ;; cache; each gb[o] still receives d[0, o], d[1, o], … one after another.
  (func (export "outerBias") (param $gb i32) (param $d i32) (param $n i32) (param $units i32)
    (local $o i32) (local $r i32) (local $p i32) (local $q i32) (local $pairs i32)
    (local.set $pairs (i32.and (local.get $units) (i32.const -2)))
    (loop $rows
      (local.set $o (i32.const 0))
      (local.set $p (local.get $d))
      (local.set $q (local.get $gb))
      (block $done
        (loop $cols
          (br_if $done (i32.ge_u (local.get $o) (local.get $pairs)))
          (v128.store (local.get $q) (f64x2.add (v128.load (local.get $q)) (v128.load (local.get $p))))
          (local.set $p (i32.add (local.get $p) (i32.const 16)))
          (local.set $q (i32.add (local.get $q) (i32.const 16)))
          (local.set $o (i32.add (local.get $o) (i32.const 2)))
          (br $cols)))
      (if (i32.and (local.get $units) (i32.const 1))
        (then (f64.store (local.get $q) (f64.add (f64.load (local.get $q)) (f64.load (local.get $p))))))
      (local.set $d (i32.add (local.get $d) (i32.shl (local.get $units) (i32.const 3))))
      (br_if $rows (i32.lt_u (local.tee $r (i32.add (local.get $r) (i32.const 1))) (local.get $n)))))

  ;; dst[r, i] (=|+=) Σ_o d[r, o]·W[o, i], o in order, for r < n, i < fanIn (W units×fanIn,
  ;; d n×units, dst n×fanIn). Without $accumulate each sum starts from the 48 zero bytes at
  ;; $zero, with it from dst. W is packed first into panels of six columns ($pack: units·F
  ;; entries, F = fanIn rounded up to a multiple of 6), one after another; then, as in `dense`,
  ;; rows are the outer loop: three rows of d stay in the L1 cache while the panels stream past
  ;; (from L2: a panel-outer order streamed all of d once per panel, and lost half its rate
  ;; whenever the other core was busy with memory).
  (func (export "backprop")
    (param $w i32) (param $d i32) (param $n i32) (param $fanIn i32) (param $units i32)
    (param $dst i32) (param $accumulate i32) (param $zero i32) (param $pack i32)
    (local $i i32) (local $r i32) (local $cp i32) (local $at i32) (local $panelBytes i32)
    (local.set $panelBytes (i32.mul (i32.const 48) (local.get $units)))
    (local.set $at (local.get $pack))
    (loop $pack_cols
      (call $panel (local.get $w) (local.get $units) (local.get $fanIn) (local.get $fanIn) (local.get $i) (i32.const 6) (local.get $at))
      (local.set $at (i32.add (local.get $at) (local.get $panelBytes)))
      (br_if $pack_cols (i32.lt_u (local.tee $i (i32.add (local.get $i) (i32.const 6))) (local.get $fanIn))))
    (loop $row_blocks
      (local.set $i (i32.const 0))
      (local.set $at (local.get $pack))
      (loop $in_cols
        (local.set $cp (i32.add (local.get $dst) (i32.shl (i32.add (i32.mul (local.get $r) (local.get $fanIn)) (local.get $i)) (i32.const 3))))
        (call $tile
          (i32.add (local.get $d) (i32.shl (i32.mul (local.get $r) (local.get $units)) (i32.const 3)))
          (i32.shl (local.get $units) (i32.const 3))
          (i32.const 8)
          (local.get $at)
          (i32.const 48)
          (local.get $units)
          (select (local.get $cp) (local.get $zero) (local.get $accumulate))
          (select (i32.shl (local.get $fanIn) (i32.const 3)) (i32.const 0) (local.get $accumulate))
          (local.get $cp)
          (i32.shl (local.get $fanIn) (i32.const 3))
          (call $min (i32.sub (local.get $n) (local.get $r)) (i32.const 3))
          (call $min (i32.sub (local.get $fanIn) (local.get $i)) (i32.const 6))
          (i32.const 0))
        (local.set $at (i32.add (local.get $at) (local.get $panelBytes)))
        (br_if $in_cols (i32.lt_u (local.tee $i (i32.add (local.get $i) (i32.const 6))) (local.get $fanIn))))
      (br_if $row_blocks (i32.lt_u (local.tee $r (i32.add (local.get $r) (i32.const 3))) (local.get $n)))))

  ;; ---- Products whose coefficient matrix holds many exact zeros (ReLU layers) ----
  ;;
  ;; The same sums as the kernels above, term for term in the same order, except that terms
  ;; whose coefficient is ±0 are not added. That leaves every sum unchanged when the other factor
  ;; is finite and the sum does not start at −0 (kernels-wasm.ts checks both before it comes
  ;; here): c·x is then ±0, s + ±0 = s for s ≠ 0, and +0 + ±0 = +0.
  ;;
  ;; A coefficient matrix is first compacted into lists, one per row of the result: list t holds
  ;; its nonzero coefficients at $vals + 8·t·cap, in order, and beside each the byte offset of
  ;; its row in a panel of the other factor at $offs + 4·t·cap; its length is at $counts + 4·t.
  ;; The other factor is packed into panels of sixteen columns, row k of a panel at 128·k.

  ;; Number of entries equal to ±0 among the $count doubles at $p.
  (func (export "zeros") (param $p i32) (param $count i32) (result i32)
    (local $acc v128) (local $end i32) (local $z i32)
    (local.set $end (i32.add (local.get $p) (i32.shl (i32.and (local.get $count) (i32.const -2)) (i32.const 3))))
    (block $done
      (loop $pairs
        (br_if $done (i32.ge_u (local.get $p) (local.get $end)))
        ;; an equal lane is all ones, −1 as an integer: subtracting counts it
        (local.set $acc (i64x2.sub (local.get $acc) (f64x2.eq (v128.load (local.get $p)) (v128.const f64x2 0 0))))
        (local.set $p (i32.add (local.get $p) (i32.const 16)))
        (br $pairs)))
    (local.set $z (i32.wrap_i64 (i64.add (i64x2.extract_lane 0 (local.get $acc)) (i64x2.extract_lane 1 (local.get $acc)))))
    (if (i32.and (local.get $count) (i32.const 1))
      (then (local.set $z (i32.add (local.get $z) (f64.eq (f64.load (local.get $p)) (f64.const 0))))))
    (local.get $z))

  ;; Compacts $lists lists of $len coefficients — entry k of list t at $a + t·$listStep + k·$entryStep —
  ;; into the lists described above, with offsets k·128. Every entry is written and the
  ;; position advances only past nonzero ones (no branch to mispredict). Returns the total kept.
  (func (export "compact")
    (param $a i32) (param $lists i32) (param $len i32) (param $listStep i32) (param $entryStep i32)
    (param $vals i32) (param $offs i32) (param $counts i32) (param $cap i32) (result i32)
    (local $t i32) (local $k i32) (local $p i32) (local $v f64) (local $e i32) (local $total i32)
    (local $vp i32) (local $op i32)
    (block $empty (br_if $empty (i32.eqz (local.get $len)))
      (loop $list
        (local.set $p (i32.add (local.get $a) (i32.mul (local.get $t) (local.get $listStep))))
        (local.set $vp (i32.add (local.get $vals) (i32.shl (i32.mul (local.get $t) (local.get $cap)) (i32.const 3))))
        (local.set $op (i32.add (local.get $offs) (i32.shl (i32.mul (local.get $t) (local.get $cap)) (i32.const 2))))
        (local.set $e (i32.const 0))
        (local.set $k (i32.const 0))
        (loop $entry
          (local.set $v (f64.load (local.get $p)))
          (f64.store (i32.add (local.get $vp) (i32.shl (local.get $e) (i32.const 3))) (local.get $v))
          (i32.store (i32.add (local.get $op) (i32.shl (local.get $e) (i32.const 2))) (i32.shl (local.get $k) (i32.const 7)))
          ;; NaN is kept (NaN ≠ 0), so it reaches the sums as in the kernels above
          (local.set $e (i32.add (local.get $e) (f64.ne (local.get $v) (f64.const 0))))
          (local.set $p (i32.add (local.get $p) (local.get $entryStep)))
          (br_if $entry (i32.lt_u (local.tee $k (i32.add (local.get $k) (i32.const 1))) (local.get $len))))
        (i32.store (i32.add (local.get $counts) (i32.shl (local.get $t) (i32.const 2))) (local.get $e))
        (local.set $total (i32.add (local.get $total) (local.get $e)))
        (br_if $list (i32.lt_u (local.tee $t (i32.add (local.get $t) (i32.const 1))) (local.get $lists)))))
    (local.get $total))

  ;; Packs B[k, j] = f64 at $src + k·$kStep + j·$jStep, for k < $rows and j < $width, into panels
  ;; of sixteen columns at $dst (panel p at $dst + 128·rows·p, row k at + 128·k; zeros past $width).
  (func (export "pack16") (param $src i32) (param $rows i32) (param $kStep i32) (param $jStep i32) (param $width i32) (param $dst i32)
    (local $j i32) (local $k i32) (local $q i32) (local $s i32) (local $panelBytes i32)
    (local.set $panelBytes (i32.shl (local.get $rows) (i32.const 7)))
    (loop $cols
      (local.set $q (i32.add (local.get $dst)
        (i32.add (i32.mul (i32.shr_u (local.get $j) (i32.const 4)) (local.get $panelBytes)) (i32.shl (i32.and (local.get $j) (i32.const 15)) (i32.const 3)))))
      (local.set $s (i32.add (local.get $src) (i32.mul (local.get $j) (local.get $jStep))))
      (local.set $k (i32.const 0))
      (loop $rows_loop
        (f64.store (local.get $q)
          (if (result f64) (i32.lt_u (local.get $j) (local.get $width))
            (then (f64.load (local.get $s)))
            (else (f64.const 0))))
        (local.set $q (i32.add (local.get $q) (i32.const 128)))
        (local.set $s (i32.add (local.get $s) (local.get $kStep)))
        (br_if $rows_loop (i32.lt_u (local.tee $k (i32.add (local.get $k) (i32.const 1))) (local.get $rows))))
      (br_if $cols (i32.lt_u (local.tee $j (i32.add (local.get $j) (i32.const 1)))
        (i32.and (i32.add (local.get $width) (i32.const 15)) (i32.const -16))))))

  ;; One row of sixteen columns: out[j] = I[j] + Σ_e vals[e]·P[offs[e], j], e in order, with the
  ;; starting values I at $i (sixteen doubles; past the result's edge they are read, not used)
  ;; and the panel P at $b. Eight accumulators stay in registers. A full row (cols = 16) is stored
  ;; at $c (C + out with $add); a partial one is staged at $stage and its first cols entries written.
  (func $sparseRow
    (param $vals i32) (param $offs i32) (param $count i32) (param $b i32)
    (param $i i32) (param $c i32) (param $cols i32) (param $add i32) (param $stage i32)
    (local $s v128) (local $p i32) (local $j i32) (local $end i32)
    (local $x0 v128) (local $x1 v128) (local $x2 v128) (local $x3 v128)
    (local $x4 v128) (local $x5 v128) (local $x6 v128) (local $x7 v128)
    (local.set $x0 (v128.load offset=0 (local.get $i)))
    (local.set $x1 (v128.load offset=16 (local.get $i)))
    (local.set $x2 (v128.load offset=32 (local.get $i)))
    (local.set $x3 (v128.load offset=48 (local.get $i)))
    (local.set $x4 (v128.load offset=64 (local.get $i)))
    (local.set $x5 (v128.load offset=80 (local.get $i)))
    (local.set $x6 (v128.load offset=96 (local.get $i)))
    (local.set $x7 (v128.load offset=112 (local.get $i)))
    (local.set $end (i32.add (local.get $vals) (i32.shl (local.get $count) (i32.const 3))))
    (block $done
      (loop $next
        (br_if $done (i32.ge_u (local.get $vals) (local.get $end)))
        (local.set $s (v128.load64_splat (local.get $vals)))
        (local.set $p (i32.add (local.get $b) (i32.load (local.get $offs))))
        (local.set $x0 (f64x2.add (local.get $x0) (f64x2.mul (v128.load offset=0 (local.get $p)) (local.get $s))))
        (local.set $x1 (f64x2.add (local.get $x1) (f64x2.mul (v128.load offset=16 (local.get $p)) (local.get $s))))
        (local.set $x2 (f64x2.add (local.get $x2) (f64x2.mul (v128.load offset=32 (local.get $p)) (local.get $s))))
        (local.set $x3 (f64x2.add (local.get $x3) (f64x2.mul (v128.load offset=48 (local.get $p)) (local.get $s))))
        (local.set $x4 (f64x2.add (local.get $x4) (f64x2.mul (v128.load offset=64 (local.get $p)) (local.get $s))))
        (local.set $x5 (f64x2.add (local.get $x5) (f64x2.mul (v128.load offset=80 (local.get $p)) (local.get $s))))
        (local.set $x6 (f64x2.add (local.get $x6) (f64x2.mul (v128.load offset=96 (local.get $p)) (local.get $s))))
        (local.set $x7 (f64x2.add (local.get $x7) (f64x2.mul (v128.load offset=112 (local.get $p)) (local.get $s))))
        (local.set $vals (i32.add (local.get $vals) (i32.const 8)))
        (local.set $offs (i32.add (local.get $offs) (i32.const 4)))
        (br $next)))
    (if (i32.eq (local.get $cols) (i32.const 16))
      (then
        (if (local.get $add)
          (then
            (local.set $x0 (f64x2.add (v128.load offset=0 (local.get $c)) (local.get $x0)))
            (local.set $x1 (f64x2.add (v128.load offset=16 (local.get $c)) (local.get $x1)))
            (local.set $x2 (f64x2.add (v128.load offset=32 (local.get $c)) (local.get $x2)))
            (local.set $x3 (f64x2.add (v128.load offset=48 (local.get $c)) (local.get $x3)))
            (local.set $x4 (f64x2.add (v128.load offset=64 (local.get $c)) (local.get $x4)))
            (local.set $x5 (f64x2.add (v128.load offset=80 (local.get $c)) (local.get $x5)))
            (local.set $x6 (f64x2.add (v128.load offset=96 (local.get $c)) (local.get $x6)))
            (local.set $x7 (f64x2.add (v128.load offset=112 (local.get $c)) (local.get $x7)))))
        (v128.store offset=0 (local.get $c) (local.get $x0))
        (v128.store offset=16 (local.get $c) (local.get $x1))
        (v128.store offset=32 (local.get $c) (local.get $x2))
        (v128.store offset=48 (local.get $c) (local.get $x3))
        (v128.store offset=64 (local.get $c) (local.get $x4))
        (v128.store offset=80 (local.get $c) (local.get $x5))
        (v128.store offset=96 (local.get $c) (local.get $x6))
        (v128.store offset=112 (local.get $c) (local.get $x7))
        (return)))
    (v128.store offset=0 (local.get $stage) (local.get $x0))
    (v128.store offset=16 (local.get $stage) (local.get $x1))
    (v128.store offset=32 (local.get $stage) (local.get $x2))
    (v128.store offset=48 (local.get $stage) (local.get $x3))
    (v128.store offset=64 (local.get $stage) (local.get $x4))
    (v128.store offset=80 (local.get $stage) (local.get $x5))
    (v128.store offset=96 (local.get $stage) (local.get $x6))
    (v128.store offset=112 (local.get $stage) (local.get $x7))
    (block $written
      (loop $each
        (br_if $written (i32.ge_s (local.get $j) (local.get $cols)))
        (f64.store (local.get $c)
          (if (result f64) (local.get $add)
            (then (f64.add (f64.load (local.get $c)) (f64.load (local.get $stage))))
            (else (f64.load (local.get $stage)))))
        (local.set $c (i32.add (local.get $c) (i32.const 8)))
        (local.set $stage (i32.add (local.get $stage) (i32.const 8)))
        (local.set $j (i32.add (local.get $j) (i32.const 1)))
        (br $each))))

  ;; C[t, j] (=|+=) I[t, j] + Σ over list t of coefficient·P[row, j] for t < $lists, j < $width:
  ;; C[t, j] at $c + t·$cRow + 8·j, I[t, j] at $i + t·$iRow + j·$iCol ($iRow = $iCol = 0 for one
  ;; row of sixteen zeros, $iRow = 0 for a bias), the packed panels at $b ($panelBytes apart).
  ;; Panels are the outer loop: one stays in cache while the lists stream past.
  (func (export "sparseProduct")
    (param $vals i32) (param $offs i32) (param $counts i32) (param $cap i32) (param $lists i32)
    (param $b i32) (param $panelBytes i32) (param $width i32)
    (param $c i32) (param $cRow i32) (param $i i32) (param $iRow i32) (param $iCol i32)
    (param $add i32) (param $stage i32)
    (local $j i32) (local $t i32)
    (loop $panels
      (local.set $t (i32.const 0))
      (loop $rows
        (call $sparseRow
          (i32.add (local.get $vals) (i32.shl (i32.mul (local.get $t) (local.get $cap)) (i32.const 3)))
          (i32.add (local.get $offs) (i32.shl (i32.mul (local.get $t) (local.get $cap)) (i32.const 2)))
          (i32.load (i32.add (local.get $counts) (i32.shl (local.get $t) (i32.const 2))))
          (local.get $b)
          (i32.add (local.get $i) (i32.add (i32.mul (local.get $t) (local.get $iRow)) (i32.mul (local.get $j) (local.get $iCol))))
          (i32.add (local.get $c) (i32.add (i32.mul (local.get $t) (local.get $cRow)) (i32.shl (local.get $j) (i32.const 3))))
          (call $min (i32.sub (local.get $width) (local.get $j)) (i32.const 16))
          (local.get $add)
          (local.get $stage))
        (br_if $rows (i32.lt_u (local.tee $t (i32.add (local.get $t) (i32.const 1))) (local.get $lists))))
      (local.set $b (i32.add (local.get $b) (local.get $panelBytes)))
      (br_if $panels (i32.lt_u (local.tee $j (i32.add (local.get $j) (i32.const 16))) (local.get $width)))))

  ;; ReLU of the n doubles at $a: f = a where a > 0, else +0; d1 = 1 where a > 0, else +0 — the
  ;; bits of the scalar loop in core/model/activations.ts (a NaN fails a > 0 there and here;
  ;; a compare mask ANDed with a gives a's bits or all-zero bits, which is +0).
  (func (export "relu") (param $a i32) (param $f i32) (param $d1 i32) (param $n i32)
    (local $end i32) (local $x v128) (local $m v128) (local $one v128) (local $s f64)
    (local.set $one (f64x2.splat (f64.const 1)))
    (local.set $end (i32.add (local.get $a) (i32.shl (i32.and (local.get $n) (i32.const -2)) (i32.const 3))))
    (block $done
      (loop $pairs
        (br_if $done (i32.ge_u (local.get $a) (local.get $end)))
        (local.set $x (v128.load (local.get $a)))
        (local.set $m (f64x2.gt (local.get $x) (v128.const f64x2 0 0)))
        (v128.store (local.get $f) (v128.and (local.get $x) (local.get $m)))
        (v128.store (local.get $d1) (v128.and (local.get $one) (local.get $m)))
        (local.set $a (i32.add (local.get $a) (i32.const 16)))
        (local.set $f (i32.add (local.get $f) (i32.const 16)))
        (local.set $d1 (i32.add (local.get $d1) (i32.const 16)))
        (br $pairs)))
    (if (i32.and (local.get $n) (i32.const 1))
      (then
        (local.set $s (f64.load (local.get $a)))
        (f64.store (local.get $f) (select (local.get $s) (f64.const 0) (f64.gt (local.get $s) (f64.const 0))))
        (f64.store (local.get $d1) (select (f64.const 1) (f64.const 0) (f64.gt (local.get $s) (f64.const 0)))))))

  ;; dst[i] = x[i]·y[i] for i < n (each product rounded once, as the scalar loop).
  (func (export "hadamard") (param $x i32) (param $y i32) (param $n i32) (param $dst i32)
    (local $end i32)
    (local.set $end (i32.add (local.get $x) (i32.shl (i32.and (local.get $n) (i32.const -2)) (i32.const 3))))
    (block $done
      (loop $pairs
        (br_if $done (i32.ge_u (local.get $x) (local.get $end)))
        (v128.store (local.get $dst) (f64x2.mul (v128.load (local.get $x)) (v128.load (local.get $y))))
        (local.set $x (i32.add (local.get $x) (i32.const 16)))
        (local.set $y (i32.add (local.get $y) (i32.const 16)))
        (local.set $dst (i32.add (local.get $dst) (i32.const 16)))
        (br $pairs)))
    (if (i32.and (local.get $n) (i32.const 1))
      (then (f64.store (local.get $dst) (f64.mul (f64.load (local.get $x)) (f64.load (local.get $y)))))))

  ;; dst[i] = rdh[i]·d1[i] + (dh[i]·d2[i])·ra[i] for i < n: R{δa} of the R-operator, each product
  ;; rounded on its own and added in the order of the scalar expression.
  (func (export "rDelta") (param $rdh i32) (param $d1 i32) (param $dh i32) (param $d2 i32) (param $ra i32) (param $n i32) (param $dst i32)
    (local $k i32) (local $end i32)
    (local.set $end (i32.shl (i32.and (local.get $n) (i32.const -2)) (i32.const 3)))
    (block $done
      (loop $pairs
        (br_if $done (i32.ge_u (local.get $k) (local.get $end)))
        (v128.store (i32.add (local.get $dst) (local.get $k))
          (f64x2.add
            (f64x2.mul (v128.load (i32.add (local.get $rdh) (local.get $k))) (v128.load (i32.add (local.get $d1) (local.get $k))))
            (f64x2.mul
              (f64x2.mul (v128.load (i32.add (local.get $dh) (local.get $k))) (v128.load (i32.add (local.get $d2) (local.get $k))))
              (v128.load (i32.add (local.get $ra) (local.get $k))))))
        (local.set $k (i32.add (local.get $k) (i32.const 16)))
        (br $pairs)))
    (if (i32.and (local.get $n) (i32.const 1))
      (then
        (f64.store (i32.add (local.get $dst) (local.get $k))
          (f64.add
            (f64.mul (f64.load (i32.add (local.get $rdh) (local.get $k))) (f64.load (i32.add (local.get $d1) (local.get $k))))
            (f64.mul
              (f64.mul (f64.load (i32.add (local.get $dh) (local.get $k))) (f64.load (i32.add (local.get $d2) (local.get $k))))
              (f64.load (i32.add (local.get $ra) (local.get $k)))))))))

  ;; 1 when every one of the $count doubles at $p is finite, else 0 (x − x is 0 exactly for a
  ;; finite x and NaN for ±∞ and NaN, and a NaN survives every later addition).
  (func (export "finite") (param $p i32) (param $count i32) (result i32)
    (local $acc v128) (local $v v128) (local $end i32) (local $s f64)
    (local.set $end (i32.add (local.get $p) (i32.shl (i32.and (local.get $count) (i32.const -2)) (i32.const 3))))
    (block $done
      (loop $pairs
        (br_if $done (i32.ge_u (local.get $p) (local.get $end)))
        (local.set $v (v128.load (local.get $p)))
        (local.set $acc (f64x2.add (local.get $acc) (f64x2.sub (local.get $v) (local.get $v))))
        (local.set $p (i32.add (local.get $p) (i32.const 16)))
        (br $pairs)))
    (local.set $s (f64.add (f64x2.extract_lane 0 (local.get $acc)) (f64x2.extract_lane 1 (local.get $acc))))
    (if (i32.and (local.get $count) (i32.const 1))
      (then (local.set $s (f64.add (local.get $s) (f64.sub (f64.load (local.get $p)) (f64.load (local.get $p)))))))
    (f64.eq (local.get $s) (f64.const 0))))
