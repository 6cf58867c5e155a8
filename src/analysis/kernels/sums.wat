;; Sums and sums of squares for the level meter, in two lanes: lane 0 takes frames 0, 2, 4 ... of
;; the call, lane 1 frames 1, 3, 5 ... (the scalar loop's two accumulators), each lane adding in
;; stream order, so the sums equal that loop's to the bit. A last odd frame goes to lane 0.
;;
;; Memory (bytes): IN 0 float32[CAP]; SUM 65536 f64x2; SQUARES 65552 f64x2. CAP = 16384 frames.
(module
  (memory (export "memory") 2)
  (func (export "sums") (param $frames i32)
    (local $at i32) (local $pairsEnd i32) (local $x v128) (local $s v128) (local $q v128) (local $v f64)
    (local.set $s (v128.load (i32.const 65536)))
    (local.set $q (v128.load (i32.const 65552)))
    (local.set $pairsEnd (i32.shl (i32.shr_u (local.get $frames) (i32.const 1)) (i32.const 3)))
    (block $done
      (loop $next
        (br_if $done (i32.ge_u (local.get $at) (local.get $pairsEnd)))
        (local.set $x (f64x2.promote_low_f32x4 (v128.load64_zero (local.get $at))))
        (local.set $s (f64x2.add (local.get $s) (local.get $x)))
        (local.set $q (f64x2.add (local.get $q) (f64x2.mul (local.get $x) (local.get $x))))
        (local.set $at (i32.add (local.get $at) (i32.const 8)))
        (br $next)))
    (if (i32.and (local.get $frames) (i32.const 1))
      (then
        (local.set $v (f64.promote_f32 (f32.load (local.get $pairsEnd))))
        (local.set $s (f64x2.replace_lane 0 (local.get $s) (f64.add (f64x2.extract_lane 0 (local.get $s)) (local.get $v))))
        (local.set $q (f64x2.replace_lane 0 (local.get $q) (f64.add (f64x2.extract_lane 0 (local.get $q)) (f64.mul (local.get $v) (local.get $v)))))))
    (v128.store (i32.const 65536) (local.get $s))
    (v128.store (i32.const 65552) (local.get $q))))
