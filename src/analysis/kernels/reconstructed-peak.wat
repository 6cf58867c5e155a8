;; Reconstructed peak (reconstructed-peak.ts): the chunk loop, stage 1, stage 2 and the
;; parabola refinement of one channel's piece of at most 16384 frames. A float32 screen (stage 1
;; and stage 2, four frames a vector) sorts the frames of each chunk it reads: those whose grid
;; values cannot beat the gate do nothing; those that are certainly overs and can raise neither
;; the maximum nor the open over's largest value are counted as overs; only the rest get the
;; exact path. The exact path computes every value with the scalar loop's operations in its
;; order (WebAssembly has no fused multiply-add, so the IEEE results are the same bits); f64x2
;; lanes hold two neighbouring outputs, not two channels, so each channel keeps its own pruning.
;; Inputs are finite (the decoders replace NaN and Infinity), so pmax/pmin equal max/min and a
;; max over values against a gate equals an OR of comparisons.
;;
;; Memory (bytes):
;;   IN 0 f32[16384] the piece's samples; ENV 65536 f32[512] their chunk maxima |x| (envelope.ts)
;;   C1 67584 stage-1 taps in input order, each splatted (f64x2[32])
;;   C2 68096 stage-2 pair weights s[4], d[4], h[4], then the refinement cap, splatted
;;   ST 68352 f64 slots: 0 maximum, 1 its frame, 2 gate, 3 sample peak, 4 max|history|, 5 pruned
;;      frames, 6 position (frames before IN), 7 over ceiling, 8 prune gain, 9 stage-2 prune gain,
;;      10 1/cap with margin, 11 the screen's runs to the exact path per chunk, averaged (a
;;      cost heuristic the channels share)
;;   SCR 68448 the slow path's grid values -1..8 of two frames, one f64x2 each (between $span
;;      calls, the screen's float32 thresholds)
;;   X 68608 f64 x: 36 history frames, then the piece; U 200192 f64 stage-1 points at the same indices
;;   OE 331776 i32, OL 528384 i32, ON 593920 i32 and OP 397312 f64: the runs of overs found (first
;;      and last X index, count, largest value; overs in a run are at most the merge distance
;;      apart); scan returns their count
;;   XF 659456 f32 x and UF 725248 f32 stage-1 points, at X's indices (the screen's copies)
;;   W 791040 the screen's weights as float32, splatted (f32x4): stage-1 half taps c[16], then s[4], d[4], h[4]
;;   OV 791488 f64: the open over's last frame (-1e300 if none), its largest value (0 if none), the
;;      merge distance + 1 (OverLog's state, set before each call and kept up to date); at +32
;;      the refinement cap rounded up to float32, splatted (f32x4)
;;
(module
  (memory (export "memory") 13)
  (global $runs (mut i32) (i32.const 0))
  (global $frames (mut i32) (i32.const 0))
  (global $converted (mut i32) (i32.const 0))
  (global $uEnd (mut i32) (i32.const 0))
  (global $u32End (mut i32) (i32.const 0))
  (global $sent (mut i32) (i32.const 0))

;; Stage 1 into U[from, to): u[m] = sum over t of C1[t] * x[m - 15 + t], added in t order from 0.
;; Eight outputs per pass (four accumulators) share each coefficient load, and each pair of x
;; loaded once serves four taps. Returns max |u| over [from, to); a lone last output's pass also
;; writes U[to] (recomputed before it is ever read).
  (func $half (param $from i32) (param $to i32) (result f64)
    (local $m i32) (local $p i32) (local $c v128) (local $top v128)
    (local $a0 v128) (local $a1 v128) (local $a2 v128) (local $a3 v128)
    (local $le0 v128) (local $le1 v128) (local $le2 v128) (local $le3 v128) (local $lo0 v128) (local $lo1 v128) (local $lo2 v128) (local $lo3 v128)
    (local.set $m (local.get $from))
    (block $eightsDone
      (loop $eights
        (br_if $eightsDone (i32.gt_s (i32.add (local.get $m) (i32.const 8)) (local.get $to)))
        (local.set $p (i32.shl (local.get $m) (i32.const 3)))
        (local.set $a0 (v128.const i64x2 0 0)) (local.set $a1 (v128.const i64x2 0 0))
        (local.set $a2 (v128.const i64x2 0 0)) (local.set $a3 (v128.const i64x2 0 0))
        (local.set $le0 (v128.load offset=68488 (local.get $p)))
        (local.set $lo0 (v128.load offset=68496 (local.get $p)))
        (local.set $le1 (v128.load offset=68504 (local.get $p)))
        (local.set $lo1 (v128.load offset=68512 (local.get $p)))
        (local.set $le2 (v128.load offset=68520 (local.get $p)))
        (local.set $lo2 (v128.load offset=68528 (local.get $p)))
        (local.set $le3 (v128.load offset=68536 (local.get $p)))
        (local.set $c (v128.load offset=67584 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $lo3 (v128.load offset=68544 (local.get $p)))
        (local.set $c (v128.load offset=67600 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $le0 (v128.load offset=68552 (local.get $p)))
        (local.set $c (v128.load offset=67616 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $lo0 (v128.load offset=68560 (local.get $p)))
        (local.set $c (v128.load offset=67632 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $le1 (v128.load offset=68568 (local.get $p)))
        (local.set $c (v128.load offset=67648 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $lo1 (v128.load offset=68576 (local.get $p)))
        (local.set $c (v128.load offset=67664 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $le2 (v128.load offset=68584 (local.get $p)))
        (local.set $c (v128.load offset=67680 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $lo2 (v128.load offset=68592 (local.get $p)))
        (local.set $c (v128.load offset=67696 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $le3 (v128.load offset=68600 (local.get $p)))
        (local.set $c (v128.load offset=67712 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $lo3 (v128.load offset=68608 (local.get $p)))
        (local.set $c (v128.load offset=67728 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $le0 (v128.load offset=68616 (local.get $p)))
        (local.set $c (v128.load offset=67744 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $lo0 (v128.load offset=68624 (local.get $p)))
        (local.set $c (v128.load offset=67760 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $le1 (v128.load offset=68632 (local.get $p)))
        (local.set $c (v128.load offset=67776 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $lo1 (v128.load offset=68640 (local.get $p)))
        (local.set $c (v128.load offset=67792 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $le2 (v128.load offset=68648 (local.get $p)))
        (local.set $c (v128.load offset=67808 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $lo2 (v128.load offset=68656 (local.get $p)))
        (local.set $c (v128.load offset=67824 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $le3 (v128.load offset=68664 (local.get $p)))
        (local.set $c (v128.load offset=67840 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $lo3 (v128.load offset=68672 (local.get $p)))
        (local.set $c (v128.load offset=67856 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $le0 (v128.load offset=68680 (local.get $p)))
        (local.set $c (v128.load offset=67872 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $lo0 (v128.load offset=68688 (local.get $p)))
        (local.set $c (v128.load offset=67888 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $le1 (v128.load offset=68696 (local.get $p)))
        (local.set $c (v128.load offset=67904 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $lo1 (v128.load offset=68704 (local.get $p)))
        (local.set $c (v128.load offset=67920 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $le2 (v128.load offset=68712 (local.get $p)))
        (local.set $c (v128.load offset=67936 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $lo2 (v128.load offset=68720 (local.get $p)))
        (local.set $c (v128.load offset=67952 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $le3 (v128.load offset=68728 (local.get $p)))
        (local.set $c (v128.load offset=67968 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $lo3 (v128.load offset=68736 (local.get $p)))
        (local.set $c (v128.load offset=67984 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $le0 (v128.load offset=68744 (local.get $p)))
        (local.set $c (v128.load offset=68000 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $lo0 (v128.load offset=68752 (local.get $p)))
        (local.set $c (v128.load offset=68016 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $le1 (v128.load offset=68760 (local.get $p)))
        (local.set $c (v128.load offset=68032 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $lo1 (v128.load offset=68768 (local.get $p)))
        (local.set $c (v128.load offset=68048 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo2))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $le2 (v128.load offset=68776 (local.get $p)))
        (local.set $c (v128.load offset=68064 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $le3))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $le0))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $le1))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $le2))))
        (local.set $lo2 (v128.load offset=68784 (local.get $p)))
        (local.set $c (v128.load offset=68080 (i32.const 0)))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $c) (local.get $lo3))))
        (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $c) (local.get $lo0))))
        (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $c) (local.get $lo1))))
        (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $c) (local.get $lo2))))
        (v128.store offset=200192 (local.get $p) (local.get $a0))
        (v128.store offset=200208 (local.get $p) (local.get $a1))
        (v128.store offset=200224 (local.get $p) (local.get $a2))
        (v128.store offset=200240 (local.get $p) (local.get $a3))
        (local.set $top (f64x2.pmax (local.get $top) (f64x2.pmax
          (f64x2.pmax (f64x2.abs (local.get $a0)) (f64x2.abs (local.get $a1)))
          (f64x2.pmax (f64x2.abs (local.get $a2)) (f64x2.abs (local.get $a3))))))
        (local.set $m (i32.add (local.get $m) (i32.const 8)))
        (br $eights)))
    (block $pairsDone
      (loop $pairs
        (br_if $pairsDone (i32.ge_s (local.get $m) (local.get $to)))
        (local.set $p (i32.shl (local.get $m) (i32.const 3)))
        (local.set $a0 (v128.const i64x2 0 0))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67584 (i32.const 0)) (v128.load offset=68488 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67600 (i32.const 0)) (v128.load offset=68496 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67616 (i32.const 0)) (v128.load offset=68504 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67632 (i32.const 0)) (v128.load offset=68512 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67648 (i32.const 0)) (v128.load offset=68520 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67664 (i32.const 0)) (v128.load offset=68528 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67680 (i32.const 0)) (v128.load offset=68536 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67696 (i32.const 0)) (v128.load offset=68544 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67712 (i32.const 0)) (v128.load offset=68552 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67728 (i32.const 0)) (v128.load offset=68560 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67744 (i32.const 0)) (v128.load offset=68568 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67760 (i32.const 0)) (v128.load offset=68576 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67776 (i32.const 0)) (v128.load offset=68584 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67792 (i32.const 0)) (v128.load offset=68592 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67808 (i32.const 0)) (v128.load offset=68600 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67824 (i32.const 0)) (v128.load offset=68608 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67840 (i32.const 0)) (v128.load offset=68616 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67856 (i32.const 0)) (v128.load offset=68624 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67872 (i32.const 0)) (v128.load offset=68632 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67888 (i32.const 0)) (v128.load offset=68640 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67904 (i32.const 0)) (v128.load offset=68648 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67920 (i32.const 0)) (v128.load offset=68656 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67936 (i32.const 0)) (v128.load offset=68664 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67952 (i32.const 0)) (v128.load offset=68672 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67968 (i32.const 0)) (v128.load offset=68680 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=67984 (i32.const 0)) (v128.load offset=68688 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=68000 (i32.const 0)) (v128.load offset=68696 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=68016 (i32.const 0)) (v128.load offset=68704 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=68032 (i32.const 0)) (v128.load offset=68712 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=68048 (i32.const 0)) (v128.load offset=68720 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=68064 (i32.const 0)) (v128.load offset=68728 (local.get $p)))))
        (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load offset=68080 (i32.const 0)) (v128.load offset=68736 (local.get $p)))))
        (v128.store offset=200192 (local.get $p) (local.get $a0))
        (local.set $a0 (f64x2.abs (local.get $a0)))
        ;; A lone last output: lane 1 is past the range.
        (if (i32.eq (i32.add (local.get $m) (i32.const 1)) (local.get $to))
          (then (local.set $a0 (f64x2.replace_lane 1 (local.get $a0) (f64.const 0)))))
        (local.set $top (f64x2.pmax (local.get $top) (local.get $a0)))
        (local.set $m (i32.add (local.get $m) (i32.const 2)))
        (br $pairs)))
    (f64.max (f64x2.extract_lane 0 (local.get $top)) (f64x2.extract_lane 1 (local.get $top))))

;; The grid value at 7/8 of frame e, sb - db, as the span loop computes it in each lane.
  (func $lastGrid (param $e i32) (result f64)
    (local $p i32) (local $x0 f64) (local $x1 f64) (local $x2 f64) (local $x3 f64)
    (local $ub f64) (local $uc f64) (local $ud f64) (local $ue f64)
    (local.set $p (i32.shl (local.get $e) (i32.const 3)))
    (local.set $x0 (f64.load offset=68600 (local.get $p))) (local.set $x1 (f64.load offset=68608 (local.get $p))) (local.set $x2 (f64.load offset=68616 (local.get $p))) (local.set $x3 (f64.load offset=68624 (local.get $p)))
    (local.set $ub (f64.load offset=200184 (local.get $p))) (local.set $uc (f64.load offset=200192 (local.get $p))) (local.set $ud (f64.load offset=200200 (local.get $p))) (local.set $ue (f64.load offset=200208 (local.get $p)))
    (f64.sub
      (f64.add (f64.add (f64.add
        (f64.mul (f64.load offset=68096 (i32.const 0)) (f64.add (local.get $x2) (local.get $uc)))
        (f64.mul (f64.load offset=68112 (i32.const 0)) (f64.add (local.get $ud) (local.get $x1))))
        (f64.mul (f64.load offset=68128 (i32.const 0)) (f64.add (local.get $x3) (local.get $ub))))
        (f64.mul (f64.load offset=68144 (i32.const 0)) (f64.add (local.get $ue) (local.get $x0))))
      (f64.add (f64.add (f64.add
        (f64.mul (f64.load offset=68160 (i32.const 0)) (f64.sub (local.get $x2) (local.get $uc)))
        (f64.mul (f64.load offset=68176 (i32.const 0)) (f64.sub (local.get $ud) (local.get $x1))))
        (f64.mul (f64.load offset=68192 (i32.const 0)) (f64.sub (local.get $x3) (local.get $ub))))
        (f64.mul (f64.load offset=68208 (i32.const 0)) (f64.sub (local.get $ue) (local.get $x0))))))

;; Frame e's reading: a new maximum (and its first frame), an over above the ceiling.
  (func $apply (param $e i32) (param $peak f64)
    (if (f64.gt (local.get $peak) (f64.load offset=68352 (i32.const 0)))
      (then
        (f64.store offset=68352 (i32.const 0) (local.get $peak))
        (f64.store offset=68360 (i32.const 0)
          (f64.sub (f64.add (f64.load offset=68400 (i32.const 0)) (f64.convert_i32_s (local.get $e))) (f64.const 36)))
        (f64.store offset=68368 (i32.const 0) (f64.min (local.get $peak) (f64.load offset=68408 (i32.const 0))))))
    (if (f64.gt (local.get $peak) (f64.load offset=68408 (i32.const 0)))
      (then (call $over (local.get $e) (local.get $peak)))))

;; An over at X index e with value `value`, as OverLog.record takes it: it joins the open over
;; when at most the merge distance after its last frame (extending this call's last run, or
;; starting a run that OverLog.recordRun joins to it), else starts a new one.
  (func $over (param $e i32) (param $value f64)
    (local $frame f64) (local $r i32)
    (local.set $frame (f64.sub (f64.add (f64.load offset=68400 (i32.const 0)) (f64.convert_i32_s (local.get $e))) (f64.const 36)))
    (local.set $r (i32.sub (global.get $runs) (i32.const 1)))
    (if (i32.and (f64.le (f64.sub (local.get $frame) (f64.load offset=791488 (i32.const 0))) (f64.load offset=791504 (i32.const 0)))
                 (i32.gt_s (global.get $runs) (i32.const 0)))
      (then
        (i32.store offset=528384 (i32.shl (local.get $r) (i32.const 2)) (local.get $e))
        (i32.store offset=593920 (i32.shl (local.get $r) (i32.const 2))
          (i32.add (i32.load offset=593920 (i32.shl (local.get $r) (i32.const 2))) (i32.const 1)))
        (f64.store offset=397312 (i32.shl (local.get $r) (i32.const 3))
          (f64.max (f64.load offset=397312 (i32.shl (local.get $r) (i32.const 3))) (local.get $value)))
        (f64.store offset=791496 (i32.const 0) (f64.max (f64.load offset=791496 (i32.const 0)) (local.get $value))))
      (else
        (local.set $r (global.get $runs))
        (i32.store offset=331776 (i32.shl (local.get $r) (i32.const 2)) (local.get $e))
        (i32.store offset=528384 (i32.shl (local.get $r) (i32.const 2)) (local.get $e))
        (i32.store offset=593920 (i32.shl (local.get $r) (i32.const 2)) (i32.const 1))
        (f64.store offset=397312 (i32.shl (local.get $r) (i32.const 3)) (local.get $value))
        (global.set $runs (i32.add (local.get $r) (i32.const 1)))
        ;; A first run of the call that joins OverLog's open over keeps that over's largest value.
        (f64.store offset=791496 (i32.const 0)
          (select (f64.max (f64.load offset=791496 (i32.const 0)) (local.get $value)) (local.get $value)
            (f64.le (f64.sub (local.get $frame) (f64.load offset=791488 (i32.const 0))) (f64.load offset=791504 (i32.const 0)))))))
    (f64.store offset=791488 (i32.const 0) (local.get $frame)))

;; A frame's reading from its grid values -1..8 in SCR (lane `lane`): each local maximum of |g|
;; refined by the parabola through it and its neighbours, capped at cap times it; the largest.
;; Unrolled; branches on the local maxima measured faster than the branch-free form (eight
;; divisions) and than both lanes in f64x2.
  (func $settle (param $e i32) (param $lane i32)
    (local $g i32) (local $a f64) (local $b f64) (local $c f64) (local $value f64)
    (local $curvature f64) (local $peak f64) (local $cap f64)
    (local.set $cap (f64.load offset=68288 (i32.const 0)))
    (local.set $g (i32.add (i32.const 68448) (i32.shl (local.get $lane) (i32.const 3))))
    (local.set $b (f64.abs (f64.load (local.get $g))))
    (local.set $c (f64.abs (f64.load offset=16 (local.get $g))))
    (local.set $a (local.get $b)) (local.set $b (local.get $c)) (local.set $c (f64.abs (f64.load offset=32 (local.get $g))))
    (local.set $value (local.get $b))
    (if (i32.and (f64.ge (local.get $b) (local.get $a)) (f64.ge (local.get $b) (local.get $c)))
      (then
        (local.set $curvature (f64.sub (f64.sub (f64.mul (f64.const 2) (local.get $b)) (local.get $a)) (local.get $c)))
        (if (f64.gt (local.get $curvature) (f64.const 0))
          (then
            (local.set $value (f64.min
              (f64.add (local.get $b) (f64.div
                (f64.mul (f64.sub (local.get $a) (local.get $c)) (f64.sub (local.get $a) (local.get $c)))
                (f64.mul (f64.const 8) (local.get $curvature))))
              (f64.mul (local.get $b) (local.get $cap))))))))
    (if (f64.gt (local.get $value) (local.get $peak)) (then (local.set $peak (local.get $value))))
    (local.set $a (local.get $b)) (local.set $b (local.get $c)) (local.set $c (f64.abs (f64.load offset=48 (local.get $g))))
    (local.set $value (local.get $b))
    (if (i32.and (f64.ge (local.get $b) (local.get $a)) (f64.ge (local.get $b) (local.get $c)))
      (then
        (local.set $curvature (f64.sub (f64.sub (f64.mul (f64.const 2) (local.get $b)) (local.get $a)) (local.get $c)))
        (if (f64.gt (local.get $curvature) (f64.const 0))
          (then
            (local.set $value (f64.min
              (f64.add (local.get $b) (f64.div
                (f64.mul (f64.sub (local.get $a) (local.get $c)) (f64.sub (local.get $a) (local.get $c)))
                (f64.mul (f64.const 8) (local.get $curvature))))
              (f64.mul (local.get $b) (local.get $cap))))))))
    (if (f64.gt (local.get $value) (local.get $peak)) (then (local.set $peak (local.get $value))))
    (local.set $a (local.get $b)) (local.set $b (local.get $c)) (local.set $c (f64.abs (f64.load offset=64 (local.get $g))))
    (local.set $value (local.get $b))
    (if (i32.and (f64.ge (local.get $b) (local.get $a)) (f64.ge (local.get $b) (local.get $c)))
      (then
        (local.set $curvature (f64.sub (f64.sub (f64.mul (f64.const 2) (local.get $b)) (local.get $a)) (local.get $c)))
        (if (f64.gt (local.get $curvature) (f64.const 0))
          (then
            (local.set $value (f64.min
              (f64.add (local.get $b) (f64.div
                (f64.mul (f64.sub (local.get $a) (local.get $c)) (f64.sub (local.get $a) (local.get $c)))
                (f64.mul (f64.const 8) (local.get $curvature))))
              (f64.mul (local.get $b) (local.get $cap))))))))
    (if (f64.gt (local.get $value) (local.get $peak)) (then (local.set $peak (local.get $value))))
    (local.set $a (local.get $b)) (local.set $b (local.get $c)) (local.set $c (f64.abs (f64.load offset=80 (local.get $g))))
    (local.set $value (local.get $b))
    (if (i32.and (f64.ge (local.get $b) (local.get $a)) (f64.ge (local.get $b) (local.get $c)))
      (then
        (local.set $curvature (f64.sub (f64.sub (f64.mul (f64.const 2) (local.get $b)) (local.get $a)) (local.get $c)))
        (if (f64.gt (local.get $curvature) (f64.const 0))
          (then
            (local.set $value (f64.min
              (f64.add (local.get $b) (f64.div
                (f64.mul (f64.sub (local.get $a) (local.get $c)) (f64.sub (local.get $a) (local.get $c)))
                (f64.mul (f64.const 8) (local.get $curvature))))
              (f64.mul (local.get $b) (local.get $cap))))))))
    (if (f64.gt (local.get $value) (local.get $peak)) (then (local.set $peak (local.get $value))))
    (local.set $a (local.get $b)) (local.set $b (local.get $c)) (local.set $c (f64.abs (f64.load offset=96 (local.get $g))))
    (local.set $value (local.get $b))
    (if (i32.and (f64.ge (local.get $b) (local.get $a)) (f64.ge (local.get $b) (local.get $c)))
      (then
        (local.set $curvature (f64.sub (f64.sub (f64.mul (f64.const 2) (local.get $b)) (local.get $a)) (local.get $c)))
        (if (f64.gt (local.get $curvature) (f64.const 0))
          (then
            (local.set $value (f64.min
              (f64.add (local.get $b) (f64.div
                (f64.mul (f64.sub (local.get $a) (local.get $c)) (f64.sub (local.get $a) (local.get $c)))
                (f64.mul (f64.const 8) (local.get $curvature))))
              (f64.mul (local.get $b) (local.get $cap))))))))
    (if (f64.gt (local.get $value) (local.get $peak)) (then (local.set $peak (local.get $value))))
    (local.set $a (local.get $b)) (local.set $b (local.get $c)) (local.set $c (f64.abs (f64.load offset=112 (local.get $g))))
    (local.set $value (local.get $b))
    (if (i32.and (f64.ge (local.get $b) (local.get $a)) (f64.ge (local.get $b) (local.get $c)))
      (then
        (local.set $curvature (f64.sub (f64.sub (f64.mul (f64.const 2) (local.get $b)) (local.get $a)) (local.get $c)))
        (if (f64.gt (local.get $curvature) (f64.const 0))
          (then
            (local.set $value (f64.min
              (f64.add (local.get $b) (f64.div
                (f64.mul (f64.sub (local.get $a) (local.get $c)) (f64.sub (local.get $a) (local.get $c)))
                (f64.mul (f64.const 8) (local.get $curvature))))
              (f64.mul (local.get $b) (local.get $cap))))))))
    (if (f64.gt (local.get $value) (local.get $peak)) (then (local.set $peak (local.get $value))))
    (local.set $a (local.get $b)) (local.set $b (local.get $c)) (local.set $c (f64.abs (f64.load offset=128 (local.get $g))))
    (local.set $value (local.get $b))
    (if (i32.and (f64.ge (local.get $b) (local.get $a)) (f64.ge (local.get $b) (local.get $c)))
      (then
        (local.set $curvature (f64.sub (f64.sub (f64.mul (f64.const 2) (local.get $b)) (local.get $a)) (local.get $c)))
        (if (f64.gt (local.get $curvature) (f64.const 0))
          (then
            (local.set $value (f64.min
              (f64.add (local.get $b) (f64.div
                (f64.mul (f64.sub (local.get $a) (local.get $c)) (f64.sub (local.get $a) (local.get $c)))
                (f64.mul (f64.const 8) (local.get $curvature))))
              (f64.mul (local.get $b) (local.get $cap))))))))
    (if (f64.gt (local.get $value) (local.get $peak)) (then (local.set $peak (local.get $value))))
    (local.set $a (local.get $b)) (local.set $b (local.get $c)) (local.set $c (f64.abs (f64.load offset=144 (local.get $g))))
    (local.set $value (local.get $b))
    (if (i32.and (f64.ge (local.get $b) (local.get $a)) (f64.ge (local.get $b) (local.get $c)))
      (then
        (local.set $curvature (f64.sub (f64.sub (f64.mul (f64.const 2) (local.get $b)) (local.get $a)) (local.get $c)))
        (if (f64.gt (local.get $curvature) (f64.const 0))
          (then
            (local.set $value (f64.min
              (f64.add (local.get $b) (f64.div
                (f64.mul (f64.sub (local.get $a) (local.get $c)) (f64.sub (local.get $a) (local.get $c)))
                (f64.mul (f64.const 8) (local.get $curvature))))
              (f64.mul (local.get $b) (local.get $cap))))))))
    (if (f64.gt (local.get $value) (local.get $peak)) (then (local.set $peak (local.get $value))))
    (call $apply (local.get $e) (local.get $peak)))

;; Stage 2 and the gate for grid frames [e0, e1), two frames a pass (lanes e, e + 1). Frame e's
;; halves interpolate z from x[e] to u[e] and from u[e] to x[e + 1]; pair k of a half joins
;; z[j + 1 + k] and z[j - k]. Frames whose grid values could beat the gate are read, in order.
  (func $span (param $e0 i32) (param $e1 i32)
    (local $e i32) (local $p i32) (local $gates v128) (local $test v128) (local $g8 v128) (local $last v128)
    (local $x0 v128) (local $x1 v128) (local $x2 v128) (local $x3 v128)
    (local $ua v128) (local $ub v128) (local $uc v128) (local $ud v128) (local $ue v128)
    (local $pa0 v128) (local $pa1 v128) (local $pa2 v128) (local $pa3 v128)
    (local $pb0 v128) (local $pb1 v128) (local $pb2 v128) (local $pb3 v128)
    (local $sa v128) (local $da v128) (local $ya v128) (local $sb v128) (local $db v128) (local $yb v128)
    (local $w0 v128) (local $w1 v128) (local $w2 v128) (local $w3 v128) (local $w4 v128) (local $w5 v128) (local $w6 v128) (local $w7 v128) (local $w8 v128) (local $w9 v128) (local $w10 v128) (local $w11 v128)
    (local.set $gates (f64x2.splat (f64.mul (f64.load offset=68368 (i32.const 0)) (f64.load offset=68432 (i32.const 0)))))
    ;; Lane 1 carries the grid value before the next pass's first frame.
    (local.set $last (f64x2.splat (call $lastGrid (i32.sub (local.get $e0) (i32.const 1)))))
    ;; The twelve pair weights s, d, h stay in locals.
    (local.set $w0 (v128.load offset=68096 (i32.const 0)))
    (local.set $w1 (v128.load offset=68112 (i32.const 0)))
    (local.set $w2 (v128.load offset=68128 (i32.const 0)))
    (local.set $w3 (v128.load offset=68144 (i32.const 0)))
    (local.set $w4 (v128.load offset=68160 (i32.const 0)))
    (local.set $w5 (v128.load offset=68176 (i32.const 0)))
    (local.set $w6 (v128.load offset=68192 (i32.const 0)))
    (local.set $w7 (v128.load offset=68208 (i32.const 0)))
    (local.set $w8 (v128.load offset=68224 (i32.const 0)))
    (local.set $w9 (v128.load offset=68240 (i32.const 0)))
    (local.set $w10 (v128.load offset=68256 (i32.const 0)))
    (local.set $w11 (v128.load offset=68272 (i32.const 0)))
    (local.set $e (local.get $e0))
    (block $done
      (loop $frames
        (br_if $done (i32.ge_s (local.get $e) (local.get $e1)))
        (local.set $p (i32.shl (local.get $e) (i32.const 3)))
        (local.set $x0 (v128.load offset=68600 (local.get $p))) (local.set $x1 (v128.load offset=68608 (local.get $p))) (local.set $x2 (v128.load offset=68616 (local.get $p))) (local.set $x3 (v128.load offset=68624 (local.get $p)))
        (local.set $ua (v128.load offset=200176 (local.get $p))) (local.set $ub (v128.load offset=200184 (local.get $p))) (local.set $uc (v128.load offset=200192 (local.get $p))) (local.set $ud (v128.load offset=200200 (local.get $p))) (local.set $ue (v128.load offset=200208 (local.get $p)))
        (local.set $pa0 (f64x2.add (local.get $uc) (local.get $x1))) (local.set $pa1 (f64x2.add (local.get $x2) (local.get $ub)))
        (local.set $pa2 (f64x2.add (local.get $ud) (local.get $x0))) (local.set $pa3 (f64x2.add (local.get $x3) (local.get $ua)))
        (local.set $sa (f64x2.add (f64x2.add (f64x2.add (f64x2.mul (local.get $w0) (local.get $pa0)) (f64x2.mul (local.get $w1) (local.get $pa1))) (f64x2.mul (local.get $w2) (local.get $pa2))) (f64x2.mul (local.get $w3) (local.get $pa3))))
        (local.set $ya (f64x2.add (f64x2.add (f64x2.add (f64x2.mul (local.get $w8) (local.get $pa0)) (f64x2.mul (local.get $w9) (local.get $pa1))) (f64x2.mul (local.get $w10) (local.get $pa2))) (f64x2.mul (local.get $w11) (local.get $pa3))))
        (local.set $da (f64x2.add (f64x2.add (f64x2.add (f64x2.mul (local.get $w4) (f64x2.sub (local.get $uc) (local.get $x1))) (f64x2.mul (local.get $w5) (f64x2.sub (local.get $x2) (local.get $ub)))) (f64x2.mul (local.get $w6) (f64x2.sub (local.get $ud) (local.get $x0)))) (f64x2.mul (local.get $w7) (f64x2.sub (local.get $x3) (local.get $ua)))))
        (local.set $pb0 (f64x2.add (local.get $x2) (local.get $uc))) (local.set $pb1 (f64x2.add (local.get $ud) (local.get $x1)))
        (local.set $pb2 (f64x2.add (local.get $x3) (local.get $ub))) (local.set $pb3 (f64x2.add (local.get $ue) (local.get $x0)))
        (local.set $sb (f64x2.add (f64x2.add (f64x2.add (f64x2.mul (local.get $w0) (local.get $pb0)) (f64x2.mul (local.get $w1) (local.get $pb1))) (f64x2.mul (local.get $w2) (local.get $pb2))) (f64x2.mul (local.get $w3) (local.get $pb3))))
        (local.set $yb (f64x2.add (f64x2.add (f64x2.add (f64x2.mul (local.get $w8) (local.get $pb0)) (f64x2.mul (local.get $w9) (local.get $pb1))) (f64x2.mul (local.get $w10) (local.get $pb2))) (f64x2.mul (local.get $w11) (local.get $pb3))))
        (local.set $db (f64x2.add (f64x2.add (f64x2.add (f64x2.mul (local.get $w4) (f64x2.sub (local.get $x2) (local.get $uc))) (f64x2.mul (local.get $w5) (f64x2.sub (local.get $ud) (local.get $x1)))) (f64x2.mul (local.get $w6) (f64x2.sub (local.get $x3) (local.get $ub)))) (f64x2.mul (local.get $w7) (f64x2.sub (local.get $ue) (local.get $x0)))))
        (local.set $g8 (f64x2.sub (local.get $sb) (local.get $db)))
        ;; The largest |grid value| of each frame (but the shared ends) against the gate.
        (local.set $test (f64x2.gt
          (f64x2.pmax
            (f64x2.pmax (f64x2.add (f64x2.abs (local.get $sa)) (f64x2.abs (local.get $da)))
                        (f64x2.add (f64x2.abs (local.get $sb)) (f64x2.abs (local.get $db))))
            (f64x2.pmax (f64x2.pmax (f64x2.abs (local.get $ya)) (f64x2.abs (local.get $yb)))
                        (f64x2.pmax (f64x2.abs (local.get $uc)) (f64x2.abs (local.get $x1)))))
          (local.get $gates)))
        ;; A lone last frame: lane 1 is past the span.
        (if (i32.eq (i32.add (local.get $e) (i32.const 1)) (local.get $e1))
          (then (local.set $test (v128.and (local.get $test) (v128.const i64x2 -1 0)))))
        (if (v128.any_true (local.get $test))
          (then
            (v128.store offset=68448 (i32.const 0) (i8x16.shuffle 8 9 10 11 12 13 14 15 16 17 18 19 20 21 22 23 (local.get $last) (local.get $g8)))
            (v128.store offset=68464 (i32.const 0) (local.get $x1))
            (v128.store offset=68480 (i32.const 0) (f64x2.add (local.get $sa) (local.get $da)))
            (v128.store offset=68496 (i32.const 0) (local.get $ya))
            (v128.store offset=68512 (i32.const 0) (f64x2.sub (local.get $sa) (local.get $da)))
            (v128.store offset=68528 (i32.const 0) (local.get $uc))
            (v128.store offset=68544 (i32.const 0) (f64x2.add (local.get $sb) (local.get $db)))
            (v128.store offset=68560 (i32.const 0) (local.get $yb))
            (v128.store offset=68576 (i32.const 0) (local.get $g8))
            (v128.store offset=68592 (i32.const 0) (local.get $x2))
            ;; In frame order. Lane 1 passed the gate as it was before lane 0's reading: if that reading
            ;; raised it past lane 1, lane 1 reads below the maximum and the ceiling and changes nothing.
            (if (i64.ne (i64x2.extract_lane 0 (local.get $test)) (i64.const 0)) (then (call $settle (local.get $e) (i32.const 0))))
            (if (i64.ne (i64x2.extract_lane 1 (local.get $test)) (i64.const 0)) (then (call $settle (i32.add (local.get $e) (i32.const 1)) (i32.const 1))))
            (local.set $gates (f64x2.splat (f64.mul (f64.load offset=68368 (i32.const 0)) (f64.load offset=68432 (i32.const 0)))))))
        (local.set $last (local.get $g8))
        (local.set $e (i32.add (local.get $e) (i32.const 2)))
        (br $frames))))

;; Whether a reading up to `bound` could matter: above the ceiling, or above the maximum read so
;; far and not below a sample already seen (a reading below a sample cannot be the maximum nor
;; its first frame).
  (func $mayExceed (param $bound f64) (result i32)
    (i32.or (f64.gt (local.get $bound) (f64.load offset=68408 (i32.const 0)))
      (i32.and (f64.gt (local.get $bound) (f64.load offset=68352 (i32.const 0)))
               (f64.ge (local.get $bound) (f64.load offset=68376 (i32.const 0))))))

  (func $prune (param $frames i32)
    (f64.store offset=68392 (i32.const 0) (f64.add (f64.load offset=68392 (i32.const 0)) (f64.convert_i32_s (local.get $frames)))))

;; IN[from, to) to f64 in X[36 + from, 36 + to), four a pass from a multiple of four (X has room
;; past the piece); returns where it stopped.
  (func $convert (param $from i32) (param $to i32) (result i32)
    (local $v v128)
    (local.set $from (i32.and (local.get $from) (i32.const -4)))
    (block $converted
      (loop $convert
        (br_if $converted (i32.ge_s (local.get $from) (local.get $to)))
        (local.set $v (v128.load offset=0 (i32.shl (local.get $from) (i32.const 2))))
        (v128.store offset=68896 (i32.shl (local.get $from) (i32.const 3)) (f64x2.promote_low_f32x4 (local.get $v)))
        (v128.store offset=68912 (i32.shl (local.get $from) (i32.const 3))
          (f64x2.promote_low_f32x4 (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $v) (local.get $v))))
        (local.set $from (i32.add (local.get $from) (i32.const 4)))
        (br $convert)))
    (local.get $from))

;; The screen's stage 1 into UF[from, to), four points a vector: u[m] = sum over k of
;; c[k] * (x[m - k] + x[m + 1 + k]) in float32, added in k order. A vector past `to` writes
;; points that are recomputed before they are read.
  (func $half32 (param $from i32) (param $to i32)
    (local $p i32) (local $a v128)
    (block $done
      (loop $quads
        (br_if $done (i32.ge_s (local.get $from) (local.get $to)))
        (local.set $p (i32.shl (local.get $from) (i32.const 2)))
        (local.set $a (f32x4.mul (v128.load offset=791040 (i32.const 0)) (f32x4.add (v128.load offset=659456 (local.get $p)) (v128.load offset=659460 (local.get $p)))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791056 (i32.const 0)) (f32x4.add (v128.load offset=659452 (local.get $p)) (v128.load offset=659464 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791072 (i32.const 0)) (f32x4.add (v128.load offset=659448 (local.get $p)) (v128.load offset=659468 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791088 (i32.const 0)) (f32x4.add (v128.load offset=659444 (local.get $p)) (v128.load offset=659472 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791104 (i32.const 0)) (f32x4.add (v128.load offset=659440 (local.get $p)) (v128.load offset=659476 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791120 (i32.const 0)) (f32x4.add (v128.load offset=659436 (local.get $p)) (v128.load offset=659480 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791136 (i32.const 0)) (f32x4.add (v128.load offset=659432 (local.get $p)) (v128.load offset=659484 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791152 (i32.const 0)) (f32x4.add (v128.load offset=659428 (local.get $p)) (v128.load offset=659488 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791168 (i32.const 0)) (f32x4.add (v128.load offset=659424 (local.get $p)) (v128.load offset=659492 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791184 (i32.const 0)) (f32x4.add (v128.load offset=659420 (local.get $p)) (v128.load offset=659496 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791200 (i32.const 0)) (f32x4.add (v128.load offset=659416 (local.get $p)) (v128.load offset=659500 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791216 (i32.const 0)) (f32x4.add (v128.load offset=659412 (local.get $p)) (v128.load offset=659504 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791232 (i32.const 0)) (f32x4.add (v128.load offset=659408 (local.get $p)) (v128.load offset=659508 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791248 (i32.const 0)) (f32x4.add (v128.load offset=659404 (local.get $p)) (v128.load offset=659512 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791264 (i32.const 0)) (f32x4.add (v128.load offset=659400 (local.get $p)) (v128.load offset=659516 (local.get $p))))))
        (local.set $a (f32x4.add (local.get $a) (f32x4.mul (v128.load offset=791280 (i32.const 0)) (f32x4.add (v128.load offset=659396 (local.get $p)) (v128.load offset=659520 (local.get $p))))))
        (v128.store offset=725248 (local.get $p) (local.get $a))
        (local.set $from (i32.add (local.get $from) (i32.const 4)))
        (br $quads))))

;; max |UF[m]| for m in [from, to), four a vector (points past `to` only raise it).
  (func $u32Max (param $from i32) (param $to i32) (result f64)
    (local $top v128)
    (block $done
      (loop $quads
        (br_if $done (i32.ge_s (local.get $from) (local.get $to)))
        (local.set $top (f32x4.pmax (local.get $top) (f32x4.abs (v128.load offset=725248 (i32.shl (local.get $from) (i32.const 2))))))
        (local.set $from (i32.add (local.get $from) (i32.const 4)))
        (br $quads)))
    (f64.promote_f32 (f32.max (f32.max (f32x4.extract_lane 0 (local.get $top)) (f32x4.extract_lane 1 (local.get $top)))
                              (f32.max (f32x4.extract_lane 2 (local.get $top)) (f32x4.extract_lane 3 (local.get $top))))))

;; Directed rounding of a threshold to float32: the largest float32 <= t (-1 when t <= 0, which
;; no |value| is at or below), and the smallest float32 >= t (t > 0).
  (func $down (param $t f64) (result f32)
    (local $r f32)
    (if (f64.le (local.get $t) (f64.const 0)) (then (return (f32.const -1))))
    (local.set $r (f32.demote_f64 (local.get $t)))
    (if (f64.gt (f64.promote_f32 (local.get $r)) (local.get $t))
      (then (local.set $r (f32.reinterpret_i32 (i32.sub (i32.reinterpret_f32 (local.get $r)) (i32.const 1))))))
    (local.get $r))
  (func $up (param $t f64) (result f32)
    (local $r f32)
    (local.set $r (f32.demote_f64 (local.get $t)))
    (if (f64.lt (f64.promote_f32 (local.get $r)) (local.get $t))
      (then (local.set $r (f32.reinterpret_i32 (i32.add (i32.reinterpret_f32 (local.get $r)) (i32.const 1))))))
    (local.get $r))

;; `count` certain overs from X index `first` to `last`, each within the merge distance of the one
;; before and the first of the open over, none raising its value: as $over for each with value 0.
  (func $overs (param $first i32) (param $last i32) (param $count i32)
    (local $r i32)
    (local.set $r (i32.sub (global.get $runs) (i32.const 1)))
    (if (i32.gt_s (global.get $runs) (i32.const 0))
      (then
        (i32.store offset=528384 (i32.shl (local.get $r) (i32.const 2)) (local.get $last))
        (i32.store offset=593920 (i32.shl (local.get $r) (i32.const 2))
          (i32.add (i32.load offset=593920 (i32.shl (local.get $r) (i32.const 2))) (local.get $count))))
      (else
        (i32.store offset=331776 (i32.const 0) (local.get $first))
        (i32.store offset=528384 (i32.const 0) (local.get $last))
        (i32.store offset=593920 (i32.const 0) (local.get $count))
        (f64.store offset=397312 (i32.const 0) (f64.const 0))
        (global.set $runs (i32.const 1))))
    (f64.store offset=791488 (i32.const 0)
      (f64.sub (f64.add (f64.load offset=68400 (i32.const 0)) (f64.convert_i32_s (local.get $last))) (f64.const 36))))

;; The screen's float32 thresholds into SCR (free outside $span): M above `low` may beat the
;; gate; V (the bound on the reading) above `lowV` may beat the gate, at most `highV` raises
;; neither the maximum nor the open over's largest value.
  (func $thresholds (param $margin f64)
    (v128.store offset=68448 (i32.const 0) (f32x4.splat (call $down (f64.sub
      (f64.mul (f64.load offset=68368 (i32.const 0)) (f64.load offset=68432 (i32.const 0))) (local.get $margin)))))
    (v128.store offset=68464 (i32.const 0) (f32x4.splat (call $down (f64.mul
      (f64.sub (f64.load offset=68368 (i32.const 0)) (f64.mul (local.get $margin) (f64.const 2))) (f64.const 0x0.fffffp0)))))
    (v128.store offset=68480 (i32.const 0) (f32x4.splat (call $down (f64.mul
      (f64.sub (f64.min (f64.load offset=68352 (i32.const 0)) (f64.load offset=791496 (i32.const 0))) (f64.mul (local.get $margin) (f64.const 2)))
      (f64.const 0x0.fffffp0)))))
    (v128.store offset=68496 (i32.const 0) (f32x4.splat (call $down (f64.load offset=68368 (i32.const 0)))))
    (v128.store offset=68512 (i32.const 0) (f32x4.splat (call $down
      (f64.min (f64.load offset=68352 (i32.const 0)) (f64.load offset=791496 (i32.const 0)))))))

;; The exact path for grid frames [e0, e1): x as f64 and the exact stage-1 points they read (each
;; computed once per call: runs come in frame order), then $span.
  (func $exact (param $e0 i32) (param $e1 i32)
    (local $lo i32) (local $hi i32)
    ;; $half reads X indices e0 - 17 .. e1 + 18 (piece frames e0 - 53 .. e1 - 18).
    (local.set $lo (i32.sub (local.get $e0) (i32.const 53)))
    (if (i32.gt_s (global.get $converted) (local.get $lo)) (then (local.set $lo (global.get $converted))))
    (if (i32.lt_s (local.get $lo) (i32.const 0)) (then (local.set $lo (i32.const 0))))
    (local.set $hi (i32.sub (local.get $e1) (i32.const 17)))
    (if (i32.gt_s (local.get $hi) (global.get $frames)) (then (local.set $hi (global.get $frames))))
    (if (i32.lt_s (local.get $lo) (local.get $hi)) (then (global.set $converted (call $convert (local.get $lo) (local.get $hi)))))
    ;; Stage-1 points e0 - 2 .. e1 + 1: the frames' and the previous frame's last value.
    (local.set $lo (i32.sub (local.get $e0) (i32.const 2)))
    (if (i32.gt_s (global.get $uEnd) (local.get $lo)) (then (local.set $lo (global.get $uEnd))))
    (if (i32.lt_s (local.get $lo) (i32.add (local.get $e1) (i32.const 2)))
      (then (drop (call $half (local.get $lo) (i32.add (local.get $e1) (i32.const 2))))))
    (global.set $uEnd (i32.add (local.get $e1) (i32.const 2)))
    (call $span (local.get $e0) (local.get $e1)))

;; The screen's runs to the exact path, counted (the chunk loop falls back on whole chunks when
;; the screen sends many).
  (func $send (param $e0 i32) (param $e1 i32)
    (global.set $sent (i32.add (global.get $sent) (i32.const 1)))
    (call $exact (local.get $e0) (local.get $e1)))

;; The screen over grid frames [e0, e1), four a vector, in float32: M, the largest |grid value| of
;; a frame (but the shared ends), and V, a bound on its reading: a point certainly below a
;; neighbour (by 3 margins) is not a local maximum and reads itself, any other point at most cap
;; times itself; the sample, where certainly not a local maximum, reads itself exactly (s1). Per
;; frame, in frame order:
;; - nothing, when M <= gate / cap - margin (the exact path's own test fails) or when
;;   V <= (gate - 2 margin)(1 - 2^-20) and s1 <= gate (the reading is at most the maximum and
;;   the ceiling, so it changes neither);
;; - an over with value 0, when M > ceiling + margin (every point reads at least its |g|, so the
;;   reading is above the ceiling), V and s1 are as low against min(maximum, open over's value),
;;   and the vector's last frame is at most the merge distance after the open over's last one:
;;   OverLog then ends in the state the exact value gives;
;; - else the exact path ($exact), in runs of consecutive frames.
;; Thresholds are rounded towards the safe side ($down, $up); taken before a frame they stay
;; valid after it (the maximum, the gate and the open over's value only rise, and a frame that
;; may join the open over is joined by every over before it).
;; Why margin = 2^-15 X holds (X = max |x| over the chunk's taps, u = 2^-24; float32 weights are
;; the float64 ones rounded, relative error u): stage 1 sums 16 terms c[k] (x + x') in k order,
;; each with three roundings, so |u32 - u| <= gamma_18 * 2 sum|c| X = gamma_18 * 2.5611 X < 47 u X,
;; and |u| <= 2.5611 X, so |z| <= Z = 2.57 X. Stage 2's sums of four terms w[k] (z + z') round
;; six times on 2 Z and carry the 47 u X of u: with sum(|s| + |d|) = 1.0653 and sum |h| = 0.7841,
;; |sa| + |da| and every quarter point are within 1.0653 (12 u Z + 47 u X) + 2.2 u Z < 89 u X of
;; their real values, u within 47 u X, x exact: every float32 |g| is within 2^-17 X of the real
;; one, and the exact path's float64 values are within 2^-40 X of it, so within 2^-16 X of each
;; other; the margin doubles that. A point the exact path may refine reads at most
;; fl(|g| * cap) <= (|g32| + margin) cap (1 + 2^-53) <= V (1 + 2^-20) + 2 margin (V from |g32|
;; times cap rounded up, itself rounded, relative 2^-24). A neighbour above f32(|g32| + 3 margin)
;; >= |g32| + 2 margin (|g| <= 7 X: that rounding is below 2^-21 X) is above |g| in float64
;; too, so the exact path does not refine that point. Taps beyond
;; 2^-90 .. 2^100 (float32 overflow, or underflow near the margin) take the exact path instead.
  (func $screen (param $e0 i32) (param $e1 i32) (param $tapMax f64)
    (local $e i32) (local $p i32) (local $bits i32) (local $cheap i32) (local $moved i32) (local $maxSeen f64) (local $openSeen f64) (local $f i32) (local $rs i32) (local $re i32)
    (local $margin f64) (local $low v128) (local $over v128) (local $lowV v128) (local $highV v128) (local $m v128) (local $m3 v128) (local $v v128) (local $l1 v128) (local $s1 v128) (local $lowX v128) (local $highX v128)
    (local $sa v128) (local $da v128) (local $ya v128) (local $sb v128) (local $db v128) (local $yb v128) (local $q7 v128) (local $last v128)
    (local $g0 v128) (local $g1 v128) (local $g2 v128) (local $g3 v128) (local $g4 v128) (local $g5 v128) (local $g6 v128) (local $g7 v128) (local $g8 v128) (local $g9 v128)
    (local $x0 v128) (local $x1 v128) (local $x2 v128) (local $x3 v128)
    (local $ua v128) (local $ub v128) (local $uc v128) (local $ud v128) (local $ue v128)
    (local.set $margin (f64.mul (local.get $tapMax) (f64.const 0x1p-15)))
    (local.set $over (f32x4.splat (call $up (f64.add (f64.load offset=68408 (i32.const 0)) (local.get $margin)))))
    (local.set $m3 (f32x4.splat (f32.demote_f64 (f64.mul (local.get $margin) (f64.const 3)))))
    (call $thresholds (local.get $margin))
    (local.set $maxSeen (f64.load offset=68352 (i32.const 0)))
    (local.set $openSeen (f64.load offset=791496 (i32.const 0)))
    (local.set $low (v128.load offset=68448 (i32.const 0)))
    (local.set $lowV (v128.load offset=68464 (i32.const 0)))
    (local.set $highV (v128.load offset=68480 (i32.const 0)))
    (local.set $lowX (v128.load offset=68496 (i32.const 0)))
    (local.set $highX (v128.load offset=68512 (i32.const 0)))
    (local.set $e (local.get $e0))
    (block $done
      (loop $quads
        (br_if $done (i32.ge_s (local.get $e) (local.get $e1)))
        (local.set $p (i32.shl (local.get $e) (i32.const 2)))
        (local.set $x0 (v128.load offset=659452 (local.get $p))) (local.set $x1 (v128.load offset=659456 (local.get $p))) (local.set $x2 (v128.load offset=659460 (local.get $p))) (local.set $x3 (v128.load offset=659464 (local.get $p)))
        (local.set $ua (v128.load offset=725240 (local.get $p))) (local.set $ub (v128.load offset=725244 (local.get $p))) (local.set $uc (v128.load offset=725248 (local.get $p))) (local.set $ud (v128.load offset=725252 (local.get $p))) (local.set $ue (v128.load offset=725256 (local.get $p)))
        (local.set $sa (f32x4.add (f32x4.add (f32x4.add (f32x4.mul (v128.load offset=791296 (i32.const 0)) (f32x4.add (local.get $uc) (local.get $x1))) (f32x4.mul (v128.load offset=791312 (i32.const 0)) (f32x4.add (local.get $x2) (local.get $ub)))) (f32x4.mul (v128.load offset=791328 (i32.const 0)) (f32x4.add (local.get $ud) (local.get $x0)))) (f32x4.mul (v128.load offset=791344 (i32.const 0)) (f32x4.add (local.get $x3) (local.get $ua))))) (local.set $da (f32x4.add (f32x4.add (f32x4.add (f32x4.mul (v128.load offset=791360 (i32.const 0)) (f32x4.sub (local.get $uc) (local.get $x1))) (f32x4.mul (v128.load offset=791376 (i32.const 0)) (f32x4.sub (local.get $x2) (local.get $ub)))) (f32x4.mul (v128.load offset=791392 (i32.const 0)) (f32x4.sub (local.get $ud) (local.get $x0)))) (f32x4.mul (v128.load offset=791408 (i32.const 0)) (f32x4.sub (local.get $x3) (local.get $ua))))) (local.set $ya (f32x4.add (f32x4.add (f32x4.add (f32x4.mul (v128.load offset=791424 (i32.const 0)) (f32x4.add (local.get $uc) (local.get $x1))) (f32x4.mul (v128.load offset=791440 (i32.const 0)) (f32x4.add (local.get $x2) (local.get $ub)))) (f32x4.mul (v128.load offset=791456 (i32.const 0)) (f32x4.add (local.get $ud) (local.get $x0)))) (f32x4.mul (v128.load offset=791472 (i32.const 0)) (f32x4.add (local.get $x3) (local.get $ua)))))
        (local.set $sb (f32x4.add (f32x4.add (f32x4.add (f32x4.mul (v128.load offset=791296 (i32.const 0)) (f32x4.add (local.get $x2) (local.get $uc))) (f32x4.mul (v128.load offset=791312 (i32.const 0)) (f32x4.add (local.get $ud) (local.get $x1)))) (f32x4.mul (v128.load offset=791328 (i32.const 0)) (f32x4.add (local.get $x3) (local.get $ub)))) (f32x4.mul (v128.load offset=791344 (i32.const 0)) (f32x4.add (local.get $ue) (local.get $x0))))) (local.set $db (f32x4.add (f32x4.add (f32x4.add (f32x4.mul (v128.load offset=791360 (i32.const 0)) (f32x4.sub (local.get $x2) (local.get $uc))) (f32x4.mul (v128.load offset=791376 (i32.const 0)) (f32x4.sub (local.get $ud) (local.get $x1)))) (f32x4.mul (v128.load offset=791392 (i32.const 0)) (f32x4.sub (local.get $x3) (local.get $ub)))) (f32x4.mul (v128.load offset=791408 (i32.const 0)) (f32x4.sub (local.get $ue) (local.get $x0))))) (local.set $yb (f32x4.add (f32x4.add (f32x4.add (f32x4.mul (v128.load offset=791424 (i32.const 0)) (f32x4.add (local.get $x2) (local.get $uc))) (f32x4.mul (v128.load offset=791440 (i32.const 0)) (f32x4.add (local.get $ud) (local.get $x1)))) (f32x4.mul (v128.load offset=791456 (i32.const 0)) (f32x4.add (local.get $x3) (local.get $ub)))) (f32x4.mul (v128.load offset=791472 (i32.const 0)) (f32x4.add (local.get $ue) (local.get $x0)))))
        (local.set $q7 (f32x4.sub (local.get $sb) (local.get $db)))
        (local.set $m (f32x4.pmax
          (f32x4.pmax
            (f32x4.add (f32x4.abs (local.get $sa)) (f32x4.abs (local.get $da)))
            (f32x4.add (f32x4.abs (local.get $sb)) (f32x4.abs (local.get $db))))
          (f32x4.pmax
            (f32x4.pmax (f32x4.abs (local.get $ya)) (f32x4.abs (local.get $yb)))
            (f32x4.pmax (f32x4.abs (local.get $uc)) (f32x4.abs (local.get $x1))))))
        (if (v128.any_true (f32x4.gt (local.get $m) (local.get $low)))
          (then
            ;; |g| of grid values -1..8 (value -1 is the frame before's last; unknown before e0: 0,
            ;; which certifies nothing), each + 3 margin for the local-maximum tests.
            (local.set $g0 (f32x4.abs (i8x16.shuffle 12 13 14 15 16 17 18 19 20 21 22 23 24 25 26 27 (local.get $last) (local.get $q7))))
            (local.set $g1 (f32x4.abs (local.get $x1)))
            (local.set $g2 (f32x4.abs (f32x4.add (local.get $sa) (local.get $da))))
            (local.set $g3 (f32x4.abs (local.get $ya)))
            (local.set $g4 (f32x4.abs (f32x4.sub (local.get $sa) (local.get $da))))
            (local.set $g5 (f32x4.abs (local.get $uc)))
            (local.set $g6 (f32x4.abs (f32x4.add (local.get $sb) (local.get $db))))
            (local.set $g7 (f32x4.abs (local.get $yb)))
            (local.set $g8 (f32x4.abs (local.get $q7)))
            (local.set $g9 (f32x4.abs (local.get $x2)))
            ;; Where the sample is certainly not a local maximum it reads itself, exactly.
            (local.set $l1 (v128.or (f32x4.gt (local.get $g0) (f32x4.add (local.get $g1) (local.get $m3))) (f32x4.gt (local.get $g2) (f32x4.add (local.get $g1) (local.get $m3)))))
            (local.set $v (f32x4.pmax (f32x4.pmax (f32x4.pmax (f32x4.pmax (f32x4.pmax (f32x4.pmax (f32x4.pmax (v128.andnot (f32x4.mul (local.get $g1) (v128.load offset=791520 (i32.const 0))) (local.get $l1))
              (v128.bitselect (local.get $g2) (f32x4.mul (local.get $g2) (v128.load offset=791520 (i32.const 0))) (v128.or (f32x4.gt (local.get $g1) (f32x4.add (local.get $g2) (local.get $m3))) (f32x4.gt (local.get $g3) (f32x4.add (local.get $g2) (local.get $m3))))))
              (v128.bitselect (local.get $g3) (f32x4.mul (local.get $g3) (v128.load offset=791520 (i32.const 0))) (v128.or (f32x4.gt (local.get $g2) (f32x4.add (local.get $g3) (local.get $m3))) (f32x4.gt (local.get $g4) (f32x4.add (local.get $g3) (local.get $m3))))))
              (v128.bitselect (local.get $g4) (f32x4.mul (local.get $g4) (v128.load offset=791520 (i32.const 0))) (v128.or (f32x4.gt (local.get $g3) (f32x4.add (local.get $g4) (local.get $m3))) (f32x4.gt (local.get $g5) (f32x4.add (local.get $g4) (local.get $m3))))))
              (v128.bitselect (local.get $g5) (f32x4.mul (local.get $g5) (v128.load offset=791520 (i32.const 0))) (v128.or (f32x4.gt (local.get $g4) (f32x4.add (local.get $g5) (local.get $m3))) (f32x4.gt (local.get $g6) (f32x4.add (local.get $g5) (local.get $m3))))))
              (v128.bitselect (local.get $g6) (f32x4.mul (local.get $g6) (v128.load offset=791520 (i32.const 0))) (v128.or (f32x4.gt (local.get $g5) (f32x4.add (local.get $g6) (local.get $m3))) (f32x4.gt (local.get $g7) (f32x4.add (local.get $g6) (local.get $m3))))))
              (v128.bitselect (local.get $g7) (f32x4.mul (local.get $g7) (v128.load offset=791520 (i32.const 0))) (v128.or (f32x4.gt (local.get $g6) (f32x4.add (local.get $g7) (local.get $m3))) (f32x4.gt (local.get $g8) (f32x4.add (local.get $g7) (local.get $m3))))))
              (v128.bitselect (local.get $g8) (f32x4.mul (local.get $g8) (v128.load offset=791520 (i32.const 0))) (v128.or (f32x4.gt (local.get $g7) (f32x4.add (local.get $g8) (local.get $m3))) (f32x4.gt (local.get $g9) (f32x4.add (local.get $g8) (local.get $m3)))))))
            (local.set $s1 (v128.and (local.get $g1) (local.get $l1)))
            (local.set $bits (i32x4.bitmask (v128.and (f32x4.gt (local.get $m) (local.get $low))
              (v128.or (f32x4.gt (local.get $v) (local.get $lowV)) (f32x4.gt (local.get $s1) (local.get $lowX))))))
            ;; Lanes past the span belong to the next chunk: dropped.
            (if (i32.lt_s (i32.sub (local.get $e1) (local.get $e)) (i32.const 4))
              (then (local.set $bits (i32.and (local.get $bits)
                (i32.sub (i32.shl (i32.const 1) (i32.sub (local.get $e1) (local.get $e))) (i32.const 1))))))
            (local.set $cheap (i32x4.bitmask (v128.and (f32x4.gt (local.get $m) (local.get $over))
              (v128.and (f32x4.le (local.get $v) (local.get $highV)) (f32x4.le (local.get $s1) (local.get $highX))))))
            ;; The vector's last frame at most the merge distance after the open over's.
            (if (f64.gt
                  (f64.sub (f64.sub (f64.add (f64.load offset=68400 (i32.const 0)) (f64.convert_i32_s (local.get $e))) (f64.const 33))
                           (f64.load offset=791488 (i32.const 0)))
                  (f64.load offset=791504 (i32.const 0)))
              (then (local.set $cheap (i32.const 0))))
            (local.set $moved (i32.const 0))
            (if (local.get $bits)
              (then
                ;; All certain overs and nothing pending: one step (frames of a vector are at most 3 apart).
                (if (i32.and (i32.eq (i32.and (local.get $cheap) (local.get $bits)) (local.get $bits))
                      (i32.and (i32.ge_s (local.get $rs) (local.get $re)) (f64.ge (f64.load offset=791504 (i32.const 0)) (f64.const 4))))
                  (then
                    (call $overs (i32.add (local.get $e) (i32.ctz (local.get $bits)))
                      (i32.sub (i32.add (local.get $e) (i32.const 31)) (i32.clz (local.get $bits))) (i32.popcnt (local.get $bits)))
                    (local.set $bits (i32.const 0))))
                (block $read
                  (loop $lane
                    (br_if $read (i32.eqz (local.get $bits)))
                    (local.set $f (i32.add (local.get $e) (i32.ctz (local.get $bits))))
                    (if (i32.and (local.get $cheap) (i32.and (local.get $bits) (i32.sub (i32.const 0) (local.get $bits))))
                      (then
                        (if (i32.lt_s (local.get $rs) (local.get $re))
                          (then (call $send (local.get $rs) (local.get $re)) (local.set $moved (i32.const 1))))
                        (local.set $re (local.get $rs))
                        (call $over (local.get $f) (f64.const 0)))
                      (else
                        (if (i32.ne (local.get $f) (local.get $re))
                          (then
                            (if (i32.lt_s (local.get $rs) (local.get $re))
                              (then (call $send (local.get $rs) (local.get $re)) (local.set $moved (i32.const 1))))
                            (local.set $rs (local.get $f))))
                        (local.set $re (i32.add (local.get $f) (i32.const 1)))))
                    (local.set $bits (i32.and (local.get $bits) (i32.sub (local.get $bits) (i32.const 1))))
                    (br $lane)))
                ;; Only the exact path moves the maximum, the gate and the open over's value, and
                ;; mostly it moves none of them.
                (if (i32.and (local.get $moved)
                      (i32.or (f64.ne (local.get $maxSeen) (f64.load offset=68352 (i32.const 0)))
                              (f64.ne (local.get $openSeen) (f64.load offset=791496 (i32.const 0)))))
                  (then
                    (local.set $maxSeen (f64.load offset=68352 (i32.const 0)))
                    (local.set $openSeen (f64.load offset=791496 (i32.const 0)))
                    (call $thresholds (local.get $margin))
                    (local.set $low (v128.load offset=68448 (i32.const 0)))
                    (local.set $lowV (v128.load offset=68464 (i32.const 0)))
                    (local.set $highV (v128.load offset=68480 (i32.const 0)))
                    (local.set $lowX (v128.load offset=68496 (i32.const 0)))
                    (local.set $highX (v128.load offset=68512 (i32.const 0)))))))))
        (local.set $last (local.get $q7))
        (local.set $e (i32.add (local.get $e) (i32.const 4)))
        (br $quads)))
    (if (i32.lt_s (local.get $rs) (local.get $re)) (then (call $send (local.get $rs) (local.get $re)))))

;; One channel's piece of `frames` frames: X[0, 36) holds the history on entry and the next
;; history on return, its max |x| in slot 4. Chunk k holds piece frames [32k, 32k + 32); frame r
;; completes the grid frame at X index r + 18, whose taps are frames r - 35 .. r. A chunk is
;; skipped when max |x| over its taps times the cascade's gain (times the cap) cannot matter;
;; else the screen reads it. Returns the runs of overs written.
  (func (export "scan") (param $frames i32) (result i32)
    (local $i i32) (local $k i32) (local $from i32) (local $to i32) (local $start i32) (local $first i32)
    (local $e0 i32) (local $e1 i32) (local $lo i32) (local $runRate f64) (local $w f64)
    (local $sampleMax f64) (local $before1 f64) (local $before2 f64) (local $tapMax f64) (local $h f64)
    (global.set $runs (i32.const 0))
    (global.set $frames (local.get $frames))
    (global.set $converted (i32.const 0))
    (global.set $uEnd (i32.const 0))
    (global.set $u32End (i32.const 0))
    ;; XF: the history (float32 samples, so exact) and the piece.
    (loop $history32
      (f32.store offset=659456 (i32.shl (local.get $i) (i32.const 2))
        (f32.demote_f64 (f64.load offset=68608 (i32.shl (local.get $i) (i32.const 3)))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br_if $history32 (i32.lt_s (local.get $i) (i32.const 36))))
    (memory.copy (i32.const 659600) (i32.const 0) (i32.shl (local.get $frames) (i32.const 2)))
    ;; Grid frames before t = 0 are not read.
    (if (f64.lt (f64.load offset=68400 (i32.const 0)) (f64.const 18))
      (then (local.set $first (i32.sub (i32.const 18) (i32.trunc_f64_s (f64.load offset=68400 (i32.const 0)))))))
    (local.set $before1 (f64.load offset=68384 (i32.const 0)))
    (local.set $before2 (local.get $before1))
    (local.set $runRate (f64.load offset=68440 (i32.const 0)))
    (block $chunksDone
      (loop $chunks
        (br_if $chunksDone (i32.ge_s (local.get $from) (local.get $frames)))
        (local.set $to (select (i32.add (local.get $from) (i32.const 32)) (local.get $frames)
          (i32.lt_s (i32.add (local.get $from) (i32.const 32)) (local.get $frames))))
        (local.set $sampleMax (f64.promote_f32 (f32.load offset=65536 (i32.shl (local.get $k) (i32.const 2)))))
        (if (f64.gt (local.get $sampleMax) (f64.load offset=68376 (i32.const 0)))
          (then (f64.store offset=68376 (i32.const 0) (local.get $sampleMax))))
        (local.set $start (select (local.get $from) (local.get $first) (i32.gt_s (local.get $from) (local.get $first))))
        (if (i32.lt_s (local.get $start) (local.get $to))
          (then
            (local.set $tapMax (f64.max (local.get $sampleMax) (f64.max (local.get $before1) (local.get $before2))))
            (if (call $mayExceed (f64.mul (local.get $tapMax) (f64.load offset=68416 (i32.const 0))))
              (then
                (local.set $e0 (i32.add (local.get $start) (i32.const 18)))
                (local.set $e1 (i32.add (local.get $to) (i32.const 18)))
                ;; The screen's margin holds for taps between 2^-90 and 2^100 (no float32 overflow,
                ;; underflow far below the margin); other chunks take the exact path whole.
                ;; A run sent to the exact path costs about what 80 frames of the screen do. Where the
                ;; screen's chunks send more than one run on average (over about 64 of them, slot 11,
                ;; kept across calls: 1.4 on a steady 997 Hz tone near its maximum, where the frames
                ;; about each peak may beat it; 0.5 on the hard-limited master), chunks take the
                ;; exact path whole, the screen reading one in 32 to follow the average; the
                ;; readings are the same either way.
                (if (i32.and (i32.and (f64.ge (local.get $tapMax) (f64.const 0x1p-90)) (f64.le (local.get $tapMax) (f64.const 0x1p100)))
                             (i32.or (f64.le (local.get $runRate) (f64.const 1)) (i32.eqz (i32.and (local.get $k) (i32.const 31)))))
                  (then
                    (global.set $sent (i32.const 0))
                    ;; The screen's stage-1 points e0 - 2 .. e1 + 1 (stage 2 reads u[e - 2 .. e + 2]).
                    (local.set $lo (i32.sub (local.get $e0) (i32.const 2)))
                    (if (i32.gt_s (global.get $u32End) (local.get $lo)) (then (local.set $lo (global.get $u32End))))
                    (call $half32 (local.get $lo) (i32.add (local.get $e1) (i32.const 2)))
                    (global.set $u32End (i32.add (local.get $e1) (i32.const 2)))
                    ;; Stage 2's taps: x of this chunk and the one before, u within the margin of the screen's.
                    (if (call $mayExceed (f64.mul
                          (f64.add (f64.max (f64.max (local.get $sampleMax) (local.get $before1))
                                            (call $u32Max (i32.sub (local.get $e0) (i32.const 2)) (i32.add (local.get $e1) (i32.const 2))))
                                   (f64.mul (local.get $tapMax) (f64.const 0x1p-15)))
                          (f64.load offset=68424 (i32.const 0))))
                      (then (call $screen (local.get $e0) (local.get $e1) (local.get $tapMax)))
                      (else (call $prune (i32.sub (local.get $to) (local.get $start)))))
                    ;; A probe stands for the 32 chunks since the last: it weighs 1 - (63/64)^32.
                    (local.set $w (select (f64.const 0.3974) (f64.const 0.015625) (f64.gt (local.get $runRate) (f64.const 1))))
                    (local.set $runRate (f64.add (f64.mul (local.get $runRate) (f64.sub (f64.const 1) (local.get $w)))
                                                 (f64.mul (f64.convert_i32_s (global.get $sent)) (local.get $w)))))
                  (else (call $exact (local.get $e0) (local.get $e1)))))
              (else (call $prune (i32.sub (local.get $to) (local.get $start)))))))
        (local.set $before2 (local.get $before1))
        (local.set $before1 (local.get $sampleMax))
        (local.set $k (i32.add (local.get $k) (i32.const 1)))
        (local.set $from (i32.add (local.get $from) (i32.const 32)))
        (br $chunks)))
    ;; The next history (the piece's last 36 frames, or the old history's end and the piece) and its max |x|.
    (local.set $lo (i32.sub (local.get $frames) (i32.const 36)))
    (if (i32.gt_s (global.get $converted) (local.get $lo)) (then (local.set $lo (global.get $converted))))
    (if (i32.lt_s (local.get $lo) (i32.const 0)) (then (local.set $lo (i32.const 0))))
    (drop (call $convert (local.get $lo) (local.get $frames)))
    (memory.copy (i32.const 68608) (i32.add (i32.const 68608) (i32.shl (local.get $frames) (i32.const 3))) (i32.const 288))
    (local.set $i (i32.const 0))
    (loop $history
      (local.set $h (f64.max (local.get $h) (f64.abs (f64.load offset=68608 (i32.shl (local.get $i) (i32.const 3))))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br_if $history (i32.lt_s (local.get $i) (i32.const 36))))
    (f64.store offset=68384 (i32.const 0) (local.get $h))
    (f64.store offset=68440 (i32.const 0) (local.get $runRate))
    (global.get $runs))
)
