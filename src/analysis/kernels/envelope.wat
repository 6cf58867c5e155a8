;; The block envelope of envelope.ts: max and min |x| of each 32-frame chunk, on the samples'
;; IEEE-754 bits with the sign cleared (float order is integer order there), four samples per
;; instruction. Integer max/min are exact, so the result is the scalar pass's to the bit.
;;
;; Memory (bytes): IN 0 float32[CAP] samples; MAX 65536 i32[CAP/32]; MIN 67584 i32[CAP/32].
;; CAP = 16384 frames.
(module
  (memory (export "memory") 2)
  (func (export "extremes") (param $frames i32)
    (local $chunk i32) (local $at i32) (local $end i32) (local $whole i32)
    (local $v v128) (local $hi v128) (local $lo v128) (local $mask v128)
    (local $a i32) (local $h i32) (local $l i32)
    (local.set $mask (i32x4.splat (i32.const 0x7fffffff)))
    (local.set $whole (i32.shr_u (local.get $frames) (i32.const 5)))
    ;; Whole chunks: eight vectors each.
    (block $wholeDone
      (loop $nextChunk
        (br_if $wholeDone (i32.ge_u (local.get $chunk) (local.get $whole)))
        (local.set $at (i32.shl (local.get $chunk) (i32.const 7)))
        (local.set $hi (v128.and (v128.load (local.get $at)) (local.get $mask)))
        (local.set $lo (local.get $hi))
        (local.set $v (v128.and (v128.load offset=16 (local.get $at)) (local.get $mask)))
        (local.set $hi (i32x4.max_s (local.get $hi) (local.get $v))) (local.set $lo (i32x4.min_s (local.get $lo) (local.get $v)))
        (local.set $v (v128.and (v128.load offset=32 (local.get $at)) (local.get $mask)))
        (local.set $hi (i32x4.max_s (local.get $hi) (local.get $v))) (local.set $lo (i32x4.min_s (local.get $lo) (local.get $v)))
        (local.set $v (v128.and (v128.load offset=48 (local.get $at)) (local.get $mask)))
        (local.set $hi (i32x4.max_s (local.get $hi) (local.get $v))) (local.set $lo (i32x4.min_s (local.get $lo) (local.get $v)))
        (local.set $v (v128.and (v128.load offset=64 (local.get $at)) (local.get $mask)))
        (local.set $hi (i32x4.max_s (local.get $hi) (local.get $v))) (local.set $lo (i32x4.min_s (local.get $lo) (local.get $v)))
        (local.set $v (v128.and (v128.load offset=80 (local.get $at)) (local.get $mask)))
        (local.set $hi (i32x4.max_s (local.get $hi) (local.get $v))) (local.set $lo (i32x4.min_s (local.get $lo) (local.get $v)))
        (local.set $v (v128.and (v128.load offset=96 (local.get $at)) (local.get $mask)))
        (local.set $hi (i32x4.max_s (local.get $hi) (local.get $v))) (local.set $lo (i32x4.min_s (local.get $lo) (local.get $v)))
        (local.set $v (v128.and (v128.load offset=112 (local.get $at)) (local.get $mask)))
        (local.set $hi (i32x4.max_s (local.get $hi) (local.get $v))) (local.set $lo (i32x4.min_s (local.get $lo) (local.get $v)))
        ;; Across the four lanes.
        (local.set $hi (i32x4.max_s (local.get $hi) (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $hi) (local.get $hi))))
        (local.set $hi (i32x4.max_s (local.get $hi) (i8x16.shuffle 4 5 6 7 0 1 2 3 12 13 14 15 8 9 10 11 (local.get $hi) (local.get $hi))))
        (local.set $lo (i32x4.min_s (local.get $lo) (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $lo) (local.get $lo))))
        (local.set $lo (i32x4.min_s (local.get $lo) (i8x16.shuffle 4 5 6 7 0 1 2 3 12 13 14 15 8 9 10 11 (local.get $lo) (local.get $lo))))
        (i32.store offset=65536 (i32.shl (local.get $chunk) (i32.const 2)) (i32x4.extract_lane 0 (local.get $hi)))
        (i32.store offset=67584 (i32.shl (local.get $chunk) (i32.const 2)) (i32x4.extract_lane 0 (local.get $lo)))
        (local.set $chunk (i32.add (local.get $chunk) (i32.const 1)))
        (br $nextChunk)))
    ;; A last, shorter chunk: sample by sample.
    (if (i32.lt_u (i32.shl (local.get $whole) (i32.const 5)) (local.get $frames))
      (then
        (local.set $at (i32.shl (local.get $whole) (i32.const 7)))
        (local.set $end (i32.shl (local.get $frames) (i32.const 2)))
        (local.set $h (i32.const 0))
        (local.set $l (i32.const 0x7fffffff))
        (block $tailDone
          (loop $nextSample
            (br_if $tailDone (i32.ge_u (local.get $at) (local.get $end)))
            (local.set $a (i32.and (i32.load (local.get $at)) (i32.const 0x7fffffff)))
            (if (i32.gt_s (local.get $a) (local.get $h)) (then (local.set $h (local.get $a))))
            (if (i32.lt_s (local.get $a) (local.get $l)) (then (local.set $l (local.get $a))))
            (local.set $at (i32.add (local.get $at) (i32.const 4)))
            (br $nextSample)))
        (i32.store offset=65536 (i32.shl (local.get $whole) (i32.const 2)) (local.get $h))
        (i32.store offset=67584 (i32.shl (local.get $whole) (i32.const 2)) (local.get $l))))))
