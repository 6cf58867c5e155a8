;; Little-endian 24-bit stereo PCM to planar float, four frames per step: each sample's three
;; bytes go to the top of a 32-bit lane (sample * 256, sign intact), which converts to float
;; exactly (24 significant bits) and scales by 2^-31 exactly: the scalar conversion's values.
;;
;; Memory (bytes): IN 0 bytes[6 * CAP + 16]; LEFT 131072 float32[CAP]; RIGHT 196608 float32[CAP].
;; CAP = 16384 frames. Frames beyond the last multiple of four are left to the caller.
(module
  (memory (export "memory") 4)
  (func (export "convert") (param $frames i32)
    (local $k i32) (local $in i32) (local $a v128) (local $b v128) (local $mask v128) (local $scale v128)
    (local.set $mask (i32x4.splat (i32.const 0xffffff00)))
    (local.set $scale (f32x4.splat (f32.const 0x1p-31)))
    (block $done
      (loop $next
        (br_if $done (i32.gt_u (i32.add (local.get $k) (i32.const 4)) (local.get $frames)))
        (local.set $a (v128.load (local.get $in)))
        (local.set $b (v128.load offset=12 (local.get $in)))
        (v128.store offset=131072 (i32.shl (local.get $k) (i32.const 2))
          (f32x4.mul (local.get $scale) (f32x4.convert_i32x4_s (v128.and (local.get $mask)
            (i8x16.shuffle 0 0 1 2 6 6 7 8 12 12 13 14 22 22 23 24 (local.get $a) (local.get $b))))))
        (v128.store offset=196608 (i32.shl (local.get $k) (i32.const 2))
          (f32x4.mul (local.get $scale) (f32x4.convert_i32x4_s (v128.and (local.get $mask)
            (i8x16.shuffle 3 3 4 5 9 9 10 11 19 19 20 21 25 25 26 27 (local.get $a) (local.get $b))))))
        (local.set $k (i32.add (local.get $k) (i32.const 4)))
        (local.set $in (i32.add (local.get $in) (i32.const 24)))
        (br $next)))))
