;; Annex 2 true peak (true-peak.ts): the chunk loop and the 4x interpolation of one channel's
;; piece of at most 16384 frames. A frame whose values cannot beat the gate (min of maximum and
;; ceiling) does nothing, so a float32 pass, four frames a vector, sends only the frames that may
;; beat it to $exact: the scalar loop's float64 operations in its order (no fused multiply-add in
;; WebAssembly, so the IEEE results are the same bits), S and D of both phase pairs from
;; pre-added and pre-subtracted taps, then |S| + |D|, read by $hit in frame order.
;;
;; Memory (bytes):
;;   IN 0 f32[11 + 16384 + 3] the 11 samples before the piece, the piece, three spare for the
;;      unused lanes of a short last vector; ENV 65600 f32[512] the piece's chunk maxima |x| (envelope.ts)
;;   C 67648 the pair weights s0[6], d0[6], s1[6], d1[6], each splatted (f64x2); W 264704 the same
;;      as float32, each splatted (f32x4)
;;   ST 68032 f64 slots: 0 maximum, 1 its frame, 2 max|x| of the 11 samples before the piece,
;;      3 pruned frames, 4 position (frame of the piece's first sample), 5 over ceiling, 6 gain bound,
;;      7 1 if a run of overs may span frames (else each over is its own run)
;;   OE 68096 i32, OL 265216 i32 and OP 133632 f64: the runs of overs (consecutive frames) found,
;;      as first and last piece frame and largest value; scan returns their count
;;
(module
  (memory (export "memory") 6)
  (global $max (mut f64) (f64.const 0))
  (global $gate (mut f64) (f64.const 0))
  (global $maxAt (mut i32) (i32.const -1))
  (global $overs (mut i32) (i32.const 0))
  (global $runLast (mut i32) (i32.const 0))
  (global $extendRuns (mut i32) (i32.const 0))
  (global $ceiling (mut f64) (f64.const 0))

;; One frame's phase values: the scalar loop's test, new maximum and over, in its order.
  (func $hit (param $n i32) (param $even f64) (param $odd f64) (param $ax f64)
    (local $peak f64)
    (if (i32.or (i32.or (f64.gt (local.get $even) (global.get $gate)) (f64.gt (local.get $odd) (global.get $gate)))
                (f64.gt (local.get $ax) (global.get $gate)))
      (then
        (local.set $peak
          (if (result f64) (f64.gt (local.get $even) (local.get $odd))
            (then (select (local.get $even) (local.get $ax) (f64.gt (local.get $even) (local.get $ax))))
            (else (select (local.get $odd) (local.get $ax) (f64.gt (local.get $odd) (local.get $ax))))))
        (if (f64.gt (local.get $peak) (global.get $max))
          (then (global.set $max (local.get $peak)) (global.set $maxAt (local.get $n))))
        (if (f64.gt (local.get $peak) (global.get $ceiling))
          (then
            ;; A frame right after the open run's last extends it (OverLog merges them in any case).
            (if (i32.and (i32.and (i32.gt_s (global.get $overs) (i32.const 0)) (global.get $extendRuns))
                         (i32.eq (local.get $n) (i32.add (global.get $runLast) (i32.const 1))))
              (then
                (if (f64.gt (local.get $peak) (f64.load offset=133632 (i32.shl (i32.sub (global.get $overs) (i32.const 1)) (i32.const 3))))
                  (then (f64.store offset=133632 (i32.shl (i32.sub (global.get $overs) (i32.const 1)) (i32.const 3)) (local.get $peak))))
                (i32.store offset=265216 (i32.shl (i32.sub (global.get $overs) (i32.const 1)) (i32.const 2)) (local.get $n)))
              (else
                (i32.store offset=68096 (i32.shl (global.get $overs) (i32.const 2)) (local.get $n))
                (i32.store offset=265216 (i32.shl (global.get $overs) (i32.const 2)) (local.get $n))
                (f64.store offset=133632 (i32.shl (global.get $overs) (i32.const 3)) (local.get $peak))
                (global.set $overs (i32.add (global.get $overs) (i32.const 1)))))
            (global.set $runLast (local.get $n))))
        (global.set $gate (f64.min (global.get $max) (global.get $ceiling))))))

;; Frames [from, to) of the piece; frame n's taps are IN[n .. n + 11], IN[n + 11] its own sample.
;; A float32 pass, four frames a vector, finds the frames that may beat the gate; only those are
;; computed exactly ($exact) and read ($hit), in frame order. Why the float32 pass cannot miss one
;; (u = 2^-24; samples and weights are exact in float32: the weights are multiples of 2^-17):
;; each pair sum or difference, product and partial sum rounds once, so a float32 S or D is within
;; gamma_7 * sum_k |w_k| |a_k| <= gamma_7 * 2 tapMax * sum_k |w_k| of the exact one (gamma_n =
;; n u / (1 - n u)), and |S| + |D| adds one rounding; with sum |s| + sum |d| <= the gain bound G
;; (|s| + |d| = max of the two halved taps) the float32 phase value is within 14 u G tapMax + u G
;; tapMax < 64 u tapMax of the real one for G < 4 (G is 2.02; the float64 value is within 2^-47
;; tapMax of the real one). The gate is at most G tapMax whenever a chunk is read (else the chunk
;; bound skipped it), so rounding gate - 2^-16 tapMax (= 256 u tapMax) to float32 moves it by under
;; 4 u tapMax: a frame whose exact value beats the gate has a float32 value above that
;; rounded threshold. |x| is exact in both.
  (func $interpolate (param $from i32) (param $to i32) (param $tapMax f64)
    (local $n i32) (local $p i32) (local $lanes i32) (local $low v128) (local $test v128)
    (local $x0 v128) (local $x1 v128) (local $x2 v128) (local $x3 v128) (local $x4 v128) (local $x5 v128)
    (local $x6 v128) (local $x7 v128) (local $x8 v128) (local $x9 v128) (local $x10 v128) (local $x11 v128)
    (local $a0 v128) (local $a1 v128) (local $a2 v128) (local $a3 v128) (local $a4 v128) (local $a5 v128)
    (local $b0 v128) (local $b1 v128) (local $b2 v128) (local $b3 v128) (local $b4 v128) (local $b5 v128)
    (local $margin f64)
    (local.set $margin (f64.mul (local.get $tapMax) (f64.const 0x1p-16)))
    (global.set $gate (f64.min (global.get $max) (global.get $ceiling)))
    (local.set $low (f32x4.splat (f32.demote_f64 (f64.sub (global.get $gate) (local.get $margin)))))
    (local.set $n (local.get $from))
    (block $done
      (loop $quads
        (br_if $done (i32.ge_s (local.get $n) (local.get $to)))
        (local.set $p (i32.shl (local.get $n) (i32.const 2)))
        (local.set $x0 (v128.load offset=0 (local.get $p)))
        (local.set $x1 (v128.load offset=4 (local.get $p)))
        (local.set $x2 (v128.load offset=8 (local.get $p)))
        (local.set $x3 (v128.load offset=12 (local.get $p)))
        (local.set $x4 (v128.load offset=16 (local.get $p)))
        (local.set $x5 (v128.load offset=20 (local.get $p)))
        (local.set $x6 (v128.load offset=24 (local.get $p)))
        (local.set $x7 (v128.load offset=28 (local.get $p)))
        (local.set $x8 (v128.load offset=32 (local.get $p)))
        (local.set $x9 (v128.load offset=36 (local.get $p)))
        (local.set $x10 (v128.load offset=40 (local.get $p)))
        (local.set $x11 (v128.load offset=44 (local.get $p)))
        (local.set $a0 (f32x4.add (local.get $x11) (local.get $x0)))
        (local.set $b0 (f32x4.sub (local.get $x11) (local.get $x0)))
        (local.set $a1 (f32x4.add (local.get $x10) (local.get $x1)))
        (local.set $b1 (f32x4.sub (local.get $x10) (local.get $x1)))
        (local.set $a2 (f32x4.add (local.get $x9) (local.get $x2)))
        (local.set $b2 (f32x4.sub (local.get $x9) (local.get $x2)))
        (local.set $a3 (f32x4.add (local.get $x8) (local.get $x3)))
        (local.set $b3 (f32x4.sub (local.get $x8) (local.get $x3)))
        (local.set $a4 (f32x4.add (local.get $x7) (local.get $x4)))
        (local.set $b4 (f32x4.sub (local.get $x7) (local.get $x4)))
        (local.set $a5 (f32x4.add (local.get $x6) (local.get $x5)))
        (local.set $b5 (f32x4.sub (local.get $x6) (local.get $x5)))
        (local.set $test
          (v128.or
            (v128.or (f32x4.gt (f32x4.add (f32x4.abs (f32x4.add (f32x4.add (f32x4.add (f32x4.add (f32x4.add (f32x4.mul (v128.load offset=264704 (i32.const 0)) (local.get $a0)) (f32x4.mul (v128.load offset=264720 (i32.const 0)) (local.get $a1))) (f32x4.mul (v128.load offset=264736 (i32.const 0)) (local.get $a2))) (f32x4.mul (v128.load offset=264752 (i32.const 0)) (local.get $a3))) (f32x4.mul (v128.load offset=264768 (i32.const 0)) (local.get $a4))) (f32x4.mul (v128.load offset=264784 (i32.const 0)) (local.get $a5))))
                                          (f32x4.abs (f32x4.add (f32x4.add (f32x4.add (f32x4.add (f32x4.add (f32x4.mul (v128.load offset=264800 (i32.const 0)) (local.get $b0)) (f32x4.mul (v128.load offset=264816 (i32.const 0)) (local.get $b1))) (f32x4.mul (v128.load offset=264832 (i32.const 0)) (local.get $b2))) (f32x4.mul (v128.load offset=264848 (i32.const 0)) (local.get $b3))) (f32x4.mul (v128.load offset=264864 (i32.const 0)) (local.get $b4))) (f32x4.mul (v128.load offset=264880 (i32.const 0)) (local.get $b5)))))
                               (local.get $low))
                     (f32x4.gt (f32x4.add (f32x4.abs (f32x4.add (f32x4.add (f32x4.add (f32x4.add (f32x4.add (f32x4.mul (v128.load offset=264896 (i32.const 0)) (local.get $a0)) (f32x4.mul (v128.load offset=264912 (i32.const 0)) (local.get $a1))) (f32x4.mul (v128.load offset=264928 (i32.const 0)) (local.get $a2))) (f32x4.mul (v128.load offset=264944 (i32.const 0)) (local.get $a3))) (f32x4.mul (v128.load offset=264960 (i32.const 0)) (local.get $a4))) (f32x4.mul (v128.load offset=264976 (i32.const 0)) (local.get $a5))))
                                          (f32x4.abs (f32x4.add (f32x4.add (f32x4.add (f32x4.add (f32x4.add (f32x4.mul (v128.load offset=264992 (i32.const 0)) (local.get $b0)) (f32x4.mul (v128.load offset=265008 (i32.const 0)) (local.get $b1))) (f32x4.mul (v128.load offset=265024 (i32.const 0)) (local.get $b2))) (f32x4.mul (v128.load offset=265040 (i32.const 0)) (local.get $b3))) (f32x4.mul (v128.load offset=265056 (i32.const 0)) (local.get $b4))) (f32x4.mul (v128.load offset=265072 (i32.const 0)) (local.get $b5)))))
                               (local.get $low)))
            (f32x4.gt (f32x4.abs (local.get $x11)) (local.get $low))))
        (if (v128.any_true (local.get $test))
          (then
            (local.set $lanes (i32x4.bitmask (local.get $test)))
            ;; Lanes past the span read spare samples: dropped.
            (if (i32.lt_s (i32.sub (local.get $to) (local.get $n)) (i32.const 4))
              (then (local.set $lanes (i32.and (local.get $lanes)
                (i32.sub (i32.shl (i32.const 1) (i32.sub (local.get $to) (local.get $n))) (i32.const 1))))))
            (block $read
              (loop $lane
                (br_if $read (i32.eqz (local.get $lanes)))
                (call $exact (i32.add (local.get $n) (i32.ctz (local.get $lanes))))
                (local.set $lanes (i32.and (local.get $lanes) (i32.sub (local.get $lanes) (i32.const 1))))
                (br $lane)))
            (local.set $low (f32x4.splat (f32.demote_f64 (f64.sub (global.get $gate) (local.get $margin)))))))
        (local.set $n (i32.add (local.get $n) (i32.const 4)))
        (br $quads))))

;; Frame n exactly, with the scalar loop's operations in its order, then read.
  (func $exact (param $n i32)
    (local $p i32)
    (local $x0 f64) (local $x1 f64) (local $x2 f64) (local $x3 f64) (local $x4 f64) (local $x5 f64)
    (local $x6 f64) (local $x7 f64) (local $x8 f64) (local $x9 f64) (local $x10 f64) (local $x11 f64)
    (local $a0 f64) (local $a1 f64) (local $a2 f64) (local $a3 f64) (local $a4 f64) (local $a5 f64)
    (local $b0 f64) (local $b1 f64) (local $b2 f64) (local $b3 f64) (local $b4 f64) (local $b5 f64)
    (local.set $p (i32.shl (local.get $n) (i32.const 2)))
    (local.set $x0 (f64.promote_f32 (f32.load offset=0 (local.get $p))))
    (local.set $x1 (f64.promote_f32 (f32.load offset=4 (local.get $p))))
    (local.set $x2 (f64.promote_f32 (f32.load offset=8 (local.get $p))))
    (local.set $x3 (f64.promote_f32 (f32.load offset=12 (local.get $p))))
    (local.set $x4 (f64.promote_f32 (f32.load offset=16 (local.get $p))))
    (local.set $x5 (f64.promote_f32 (f32.load offset=20 (local.get $p))))
    (local.set $x6 (f64.promote_f32 (f32.load offset=24 (local.get $p))))
    (local.set $x7 (f64.promote_f32 (f32.load offset=28 (local.get $p))))
    (local.set $x8 (f64.promote_f32 (f32.load offset=32 (local.get $p))))
    (local.set $x9 (f64.promote_f32 (f32.load offset=36 (local.get $p))))
    (local.set $x10 (f64.promote_f32 (f32.load offset=40 (local.get $p))))
    (local.set $x11 (f64.promote_f32 (f32.load offset=44 (local.get $p))))
    (local.set $a0 (f64.add (local.get $x11) (local.get $x0)))
    (local.set $b0 (f64.sub (local.get $x11) (local.get $x0)))
    (local.set $a1 (f64.add (local.get $x10) (local.get $x1)))
    (local.set $b1 (f64.sub (local.get $x10) (local.get $x1)))
    (local.set $a2 (f64.add (local.get $x9) (local.get $x2)))
    (local.set $b2 (f64.sub (local.get $x9) (local.get $x2)))
    (local.set $a3 (f64.add (local.get $x8) (local.get $x3)))
    (local.set $b3 (f64.sub (local.get $x8) (local.get $x3)))
    (local.set $a4 (f64.add (local.get $x7) (local.get $x4)))
    (local.set $b4 (f64.sub (local.get $x7) (local.get $x4)))
    (local.set $a5 (f64.add (local.get $x6) (local.get $x5)))
    (local.set $b5 (f64.sub (local.get $x6) (local.get $x5)))
    (call $hit (local.get $n)
      (f64.add (f64.abs (f64.add (f64.add (f64.add (f64.add (f64.add (f64.mul (f64.load offset=67648 (i32.const 0)) (local.get $a0)) (f64.mul (f64.load offset=67664 (i32.const 0)) (local.get $a1))) (f64.mul (f64.load offset=67680 (i32.const 0)) (local.get $a2))) (f64.mul (f64.load offset=67696 (i32.const 0)) (local.get $a3))) (f64.mul (f64.load offset=67712 (i32.const 0)) (local.get $a4))) (f64.mul (f64.load offset=67728 (i32.const 0)) (local.get $a5))))
               (f64.abs (f64.add (f64.add (f64.add (f64.add (f64.add (f64.mul (f64.load offset=67744 (i32.const 0)) (local.get $b0)) (f64.mul (f64.load offset=67760 (i32.const 0)) (local.get $b1))) (f64.mul (f64.load offset=67776 (i32.const 0)) (local.get $b2))) (f64.mul (f64.load offset=67792 (i32.const 0)) (local.get $b3))) (f64.mul (f64.load offset=67808 (i32.const 0)) (local.get $b4))) (f64.mul (f64.load offset=67824 (i32.const 0)) (local.get $b5)))))
      (f64.add (f64.abs (f64.add (f64.add (f64.add (f64.add (f64.add (f64.mul (f64.load offset=67840 (i32.const 0)) (local.get $a0)) (f64.mul (f64.load offset=67856 (i32.const 0)) (local.get $a1))) (f64.mul (f64.load offset=67872 (i32.const 0)) (local.get $a2))) (f64.mul (f64.load offset=67888 (i32.const 0)) (local.get $a3))) (f64.mul (f64.load offset=67904 (i32.const 0)) (local.get $a4))) (f64.mul (f64.load offset=67920 (i32.const 0)) (local.get $a5))))
               (f64.abs (f64.add (f64.add (f64.add (f64.add (f64.add (f64.mul (f64.load offset=67936 (i32.const 0)) (local.get $b0)) (f64.mul (f64.load offset=67952 (i32.const 0)) (local.get $b1))) (f64.mul (f64.load offset=67968 (i32.const 0)) (local.get $b2))) (f64.mul (f64.load offset=67984 (i32.const 0)) (local.get $b3))) (f64.mul (f64.load offset=68000 (i32.const 0)) (local.get $b4))) (f64.mul (f64.load offset=68016 (i32.const 0)) (local.get $b5)))))
      (f64.abs (local.get $x11))))

;; The piece's 32-frame chunks in order, as TruePeakMeter.scanChunks: the chunk's sample peak,
;; then the bound test, then the interpolation. Returns the runs of overs found.
  (func (export "scan") (param $frames i32) (result i32)
    (local $k i32) (local $from i32) (local $to i32) (local $at i32)
    (local $sampleMax f64) (local $before f64) (local $bound f64) (local $position f64) (local $gain f64) (local $pruned f64)
    (local $maxFrame f64)
    (global.set $max (f64.load offset=68032 (i32.const 0)))
    (local.set $maxFrame (f64.load offset=68040 (i32.const 0)))
    (local.set $before (f64.load offset=68048 (i32.const 0)))
    (local.set $pruned (f64.load offset=68056 (i32.const 0)))
    (local.set $position (f64.load offset=68064 (i32.const 0)))
    (global.set $ceiling (f64.load offset=68072 (i32.const 0)))
    (local.set $gain (f64.load offset=68080 (i32.const 0)))
    (global.set $extendRuns (f64.ne (f64.load offset=68088 (i32.const 0)) (f64.const 0)))
    (global.set $overs (i32.const 0))
    (block $done
      (loop $chunks
        (br_if $done (i32.ge_s (local.get $from) (local.get $frames)))
        (local.set $to (select (i32.add (local.get $from) (i32.const 32)) (local.get $frames)
                               (i32.lt_s (i32.add (local.get $from) (i32.const 32)) (local.get $frames))))
        (local.set $sampleMax (f64.promote_f32 (f32.load offset=65600 (i32.shl (local.get $k) (i32.const 2)))))
        (if (f64.gt (local.get $sampleMax) (global.get $max))
          (then
            (local.set $at (local.get $from))
            (block $found
              (loop $search
                (br_if $found (f64.eq (f64.promote_f32 (f32.abs (f32.load offset=44 (i32.shl (local.get $at) (i32.const 2)))))
                                      (local.get $sampleMax)))
                (local.set $at (i32.add (local.get $at) (i32.const 1)))
                (br $search)))
            (global.set $max (local.get $sampleMax))
            (local.set $maxFrame (f64.add (local.get $position) (f64.convert_i32_s (local.get $at))))))
        (local.set $bound (f64.mul (f64.max (local.get $before) (local.get $sampleMax)) (local.get $gain)))
        (if (i32.or (f64.gt (local.get $bound) (global.get $max)) (f64.gt (local.get $bound) (global.get $ceiling)))
          (then
            (global.set $maxAt (i32.const -1))
            (call $interpolate (local.get $from) (local.get $to) (f64.max (local.get $before) (local.get $sampleMax)))
            (if (i32.ge_s (global.get $maxAt) (i32.const 0))
              (then
                (local.set $maxFrame
                  (f64.max (f64.const 0)
                           (f64.sub (f64.add (local.get $position) (f64.convert_i32_s (global.get $maxAt))) (f64.const 6)))))))
          (else (local.set $pruned (f64.add (local.get $pruned) (f64.convert_i32_s (i32.sub (local.get $to) (local.get $from)))))))
        (local.set $before (local.get $sampleMax))
        (local.set $k (i32.add (local.get $k) (i32.const 1)))
        (local.set $from (i32.add (local.get $from) (i32.const 32)))
        (br $chunks)))
    (f64.store offset=68032 (i32.const 0) (global.get $max))
    (f64.store offset=68040 (i32.const 0) (local.get $maxFrame))
    (f64.store offset=68048 (i32.const 0) (local.get $before))
    (f64.store offset=68056 (i32.const 0) (local.get $pruned))
    (global.get $overs)))
