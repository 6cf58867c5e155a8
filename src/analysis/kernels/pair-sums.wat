;; The channel-relation meter's window sums for one pair of channels: a*a and b*b in the two lanes
;; of an f64x2, a*b beside them, each added in stream order as the scalar loop does (bit-identical).
;;
;; Memory (bytes): A 0 float32[CAP]; B 65536 float32[CAP]; SQUARES 131072 f64x2 (aa, bb);
;; PRODUCT 131088 f64 (ab). CAP = 16384 frames.
(module
  (memory (export "memory") 3)
  (func (export "pairSums") (param $frames i32)
    (local $at i32) (local $end i32) (local $x v128) (local $sq v128) (local $ab f64)
    (local.set $sq (v128.load (i32.const 131072)))
    (local.set $ab (f64.load (i32.const 131088)))
    (local.set $end (i32.shl (local.get $frames) (i32.const 2)))
    (block $done
      (loop $next
        (br_if $done (i32.ge_u (local.get $at) (local.get $end)))
        (local.set $x (f64x2.promote_low_f32x4
          (f32x4.replace_lane 1 (f32x4.splat (f32.load (local.get $at))) (f32.load offset=65536 (local.get $at)))))
        (local.set $sq (f64x2.add (local.get $sq) (f64x2.mul (local.get $x) (local.get $x))))
        (local.set $ab (f64.add (local.get $ab)
          (f64.mul (f64x2.extract_lane 0 (local.get $x)) (f64x2.extract_lane 1 (local.get $x)))))
        (local.set $at (i32.add (local.get $at) (i32.const 4)))
        (br $next)))
    (v128.store (i32.const 131072) (local.get $sq))
    (f64.store (i32.const 131088) (local.get $ab))))
