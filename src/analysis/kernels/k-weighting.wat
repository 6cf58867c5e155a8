;; BS.1770-5 K-weighting (the two biquads of k-weighting.ts, in the operation order of the
;; loudness meter's scalar loop) for two channels at once: channel a in lane 0, channel b in
;; lane 1 of each f64x2. The arithmetic is IEEE-754 double with no fused operations, so every
;; lane computes exactly what the scalar loop computes; SIMD only runs the two at once.
;;
;; Memory (bytes; the caller writes inputs, coefficients, weights and state, reads power):
;;   IN_A   0        float32[CAP]  channel a
;;   IN_B   65536    float32[CAP]  channel b (zeros when the pair has one channel)
;;   POWER  131072   float64[CAP]  weighted power, summed over pairs in channel order
;;   COEF   262144   f64 c1 c2 a1 a2 h1 ha1 ha2
;;   WINDOW 262208   f64 sum mSum sSum maxM maxS maxMEnd maxSEnd (slide's state)
;;   PAIRS  262272   per pair: weight a, weight b, then state s1a s1b s2a s2b as f64x2 (80 bytes)
;;   RING   (given)  float64[3 s of frames], the power history of the sliding windows
;; CAP = 16384 frames.
;;
;; slide runs the loudness meter's per-sample sliding windows over power[from, from + count), in
;; the scalar loop's order: the 100 ms sum, the 3 s and 400 ms window sums (what enters minus
;; what leaves the ring), the ring write, and the maxima with the frame counts that end them.
(module
  (memory (export "memory") 6)
  (func (export "filterPair") (param $frames i32) (param $pair i32) (param $first i32)
    (local $i i32) (local $p i32)
    (local $x v128) (local $sa v128) (local $ta v128) (local $y1 v128) (local $y2 v128) (local $e v128)
    (local $s1a v128) (local $s1b v128) (local $s2a v128) (local $s2b v128)
    (local $c1 v128) (local $c2 v128) (local $a1 v128) (local $a2 v128)
    (local $h1 v128) (local $ha1 v128) (local $ha2 v128) (local $g v128)
    (local.set $c1 (f64x2.splat (f64.load (i32.const 262144))))
    (local.set $c2 (f64x2.splat (f64.load (i32.const 262152))))
    (local.set $a1 (f64x2.splat (f64.load (i32.const 262160))))
    (local.set $a2 (f64x2.splat (f64.load (i32.const 262168))))
    (local.set $h1 (f64x2.splat (f64.load (i32.const 262176))))
    (local.set $ha1 (f64x2.splat (f64.load (i32.const 262184))))
    (local.set $ha2 (f64x2.splat (f64.load (i32.const 262192))))
    (local.set $p (i32.add (i32.const 262272) (i32.mul (local.get $pair) (i32.const 80))))
    (local.set $g (v128.load (local.get $p)))
    (local.set $s1a (v128.load offset=16 (local.get $p)))
    (local.set $s1b (v128.load offset=32 (local.get $p)))
    (local.set $s2a (v128.load offset=48 (local.get $p)))
    (local.set $s2b (v128.load offset=64 (local.get $p)))
    (block $done
      (loop $next
        (br_if $done (i32.ge_u (local.get $i) (local.get $frames)))
        ;; x = (a[i], b[i]) as doubles
        (local.set $x (f64x2.promote_low_f32x4
          (f32x4.replace_lane 1
            (f32x4.splat (f32.load (i32.shl (local.get $i) (i32.const 2))))
            (f32.load offset=65536 (i32.shl (local.get $i) (i32.const 2))))))
        (local.set $sa (local.get $s1a))
        (local.set $ta (local.get $s2a))
        ;; y1 = x + sa; s1a = c1 x + s1b - a1 sa; s1b = c2 x - a2 sa
        (local.set $y1 (f64x2.add (local.get $x) (local.get $sa)))
        (local.set $s1a (f64x2.sub (f64x2.add (f64x2.mul (local.get $c1) (local.get $x)) (local.get $s1b))
                                   (f64x2.mul (local.get $a1) (local.get $sa))))
        (local.set $s1b (f64x2.sub (f64x2.mul (local.get $c2) (local.get $x)) (f64x2.mul (local.get $a2) (local.get $sa))))
        ;; y2 = y1 + ta; s2a = h1 y1 + s2b - ha1 ta; s2b = y1 - ha2 y2
        (local.set $y2 (f64x2.add (local.get $y1) (local.get $ta)))
        (local.set $s2a (f64x2.sub (f64x2.add (f64x2.mul (local.get $h1) (local.get $y1)) (local.get $s2b))
                                   (f64x2.mul (local.get $ha1) (local.get $ta))))
        (local.set $s2b (f64x2.sub (local.get $y1) (f64x2.mul (local.get $ha2) (local.get $y2))))
        ;; e = g y2 y2; power = (power + e.a) + e.b, or e.a + e.b for the first pair (0 + e.a = e.a)
        (local.set $e (f64x2.mul (f64x2.mul (local.get $g) (local.get $y2)) (local.get $y2)))
        (f64.store offset=131072 (i32.shl (local.get $i) (i32.const 3))
          (f64.add
            (if (result f64) (local.get $first)
              (then (f64x2.extract_lane 0 (local.get $e)))
              (else (f64.add (f64.load offset=131072 (i32.shl (local.get $i) (i32.const 3)))
                             (f64x2.extract_lane 0 (local.get $e)))))
            (f64x2.extract_lane 1 (local.get $e))))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $next)))
    (v128.store offset=16 (local.get $p) (local.get $s1a))
    (v128.store offset=32 (local.get $p) (local.get $s1b))
    (v128.store offset=48 (local.get $p) (local.get $s2a))
    (v128.store offset=64 (local.get $p) (local.get $s2b)))
  (func (export "slide") (param $from i32) (param $count i32) (param $ring i32) (param $sPos i32) (param $mPos i32)
                         (param $seen f64) (param $mFrames f64) (param $sFrames f64)
    (local $i i32) (local $v f64) (local $end f64)
    (local $sum f64) (local $mSum f64) (local $sSum f64) (local $maxM f64) (local $maxS f64) (local $maxMEnd f64) (local $maxSEnd f64)
    (local $pw i32) (local $sw i32) (local $mw i32)
    (local.set $sum (f64.load (i32.const 262208)))
    (local.set $mSum (f64.load (i32.const 262216)))
    (local.set $sSum (f64.load (i32.const 262224)))
    (local.set $maxM (f64.load (i32.const 262232)))
    (local.set $maxS (f64.load (i32.const 262240)))
    (local.set $maxMEnd (f64.load (i32.const 262248)))
    (local.set $maxSEnd (f64.load (i32.const 262256)))
    (local.set $pw (i32.add (i32.const 131072) (i32.shl (local.get $from) (i32.const 3))))
    (local.set $sw (i32.add (local.get $ring) (i32.shl (local.get $sPos) (i32.const 3))))
    (local.set $mw (i32.add (local.get $ring) (i32.shl (local.get $mPos) (i32.const 3))))
    (block $done
      (loop $next
        (br_if $done (i32.ge_u (local.get $i) (local.get $count)))
        (local.set $v (f64.load (local.get $pw)))
        (local.set $sum (f64.add (local.get $sum) (local.get $v)))
        (local.set $sSum (f64.add (local.get $sSum) (f64.sub (local.get $v) (f64.load (local.get $sw)))))
        (local.set $mSum (f64.add (local.get $mSum) (f64.sub (local.get $v) (f64.load (local.get $mw)))))
        (f64.store (local.get $sw) (local.get $v))
        ;; frames seen once this sample is in
        (local.set $end (f64.add (local.get $seen) (f64.convert_i32_u (i32.add (local.get $i) (i32.const 1)))))
        (if (i32.and (f64.gt (local.get $mSum) (local.get $maxM)) (f64.ge (local.get $end) (local.get $mFrames)))
          (then (local.set $maxM (local.get $mSum)) (local.set $maxMEnd (local.get $end))))
        (if (i32.and (f64.gt (local.get $sSum) (local.get $maxS)) (f64.ge (local.get $end) (local.get $sFrames)))
          (then (local.set $maxS (local.get $sSum)) (local.set $maxSEnd (local.get $end))))
        (local.set $pw (i32.add (local.get $pw) (i32.const 8)))
        (local.set $sw (i32.add (local.get $sw) (i32.const 8)))
        (local.set $mw (i32.add (local.get $mw) (i32.const 8)))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $next)))
    (f64.store (i32.const 262208) (local.get $sum))
    (f64.store (i32.const 262216) (local.get $mSum))
    (f64.store (i32.const 262224) (local.get $sSum))
    (f64.store (i32.const 262232) (local.get $maxM))
    (f64.store (i32.const 262240) (local.get $maxS))
    (f64.store (i32.const 262248) (local.get $maxMEnd))
    (f64.store (i32.const 262256) (local.get $maxSEnd)))
)
