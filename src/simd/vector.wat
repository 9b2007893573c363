;; Vector kernels of the Lanczos solver and the on-the-fly operators, in WebAssembly with 128-bit SIMD (two doubles per lane
;; pair). JavaScript keeps one multiply-add per instruction; these do two, and measured 3-4 times
;; the speed of the same loops in V8 on the solver's block sizes.
;;
;; Conventions: every pointer is a byte offset into the shared memory; `start` and `end` count
;; doubles (for complex vectors: interleaved re, im, so both are even). A "set" is an i32 table of
;; pointers to `count` vectors. Coefficient arrays hold one double per vector (real) or two (re, im).
;; The JavaScript versions in linalg/vectorKernels.ts are the reference: same loops, same grouping.
(module
  (import "env" "memory" (memory 1 65536 shared))

  ;; out[i] += sum_t a_i[t] w[t]
  (func (export "dotsReal") (param $w i32) (param $set i32) (param $count i32) (param $out i32) (param $start i32) (param $end i32)
    (local $i i32) (local $t i32) (local $stop i32) (local $x v128) (local $o i32)
    (local $a0 i32) (local $a1 i32) (local $a2 i32) (local $a3 i32)
    (local $s0 v128) (local $s1 v128) (local $s2 v128) (local $s3 v128)
    (local.set $stop (i32.shl (local.get $end) (i32.const 3)))
    (block $groupsDone (loop $groups
      (br_if $groupsDone (i32.gt_s (i32.add (local.get $i) (i32.const 4)) (local.get $count)))
      (local.set $a0 (i32.load (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $a1 (i32.load offset=4 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $a2 (i32.load offset=8 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $a3 (i32.load offset=12 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $s0 (v128.const f64x2 0 0))
      (local.set $s1 (v128.const f64x2 0 0))
      (local.set $s2 (v128.const f64x2 0 0))
      (local.set $s3 (v128.const f64x2 0 0))
      (local.set $t (i32.shl (local.get $start) (i32.const 3)))
      (block $rowsDone (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
        (local.set $x (v128.load (i32.add (local.get $w) (local.get $t))))
        (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $a0) (local.get $t))))))
        (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $a1) (local.get $t))))))
        (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $a2) (local.get $t))))))
        (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $x) (v128.load (i32.add (local.get $a3) (local.get $t))))))
        (local.set $t (i32.add (local.get $t) (i32.const 16)))
        (br $rows)))
      (local.set $o (i32.add (local.get $out) (i32.shl (local.get $i) (i32.const 3))))
      (f64.store (local.get $o) (f64.add (f64.load (local.get $o))
        (f64.add (f64x2.extract_lane 0 (local.get $s0)) (f64x2.extract_lane 1 (local.get $s0)))))
      (f64.store offset=8 (local.get $o) (f64.add (f64.load offset=8 (local.get $o))
        (f64.add (f64x2.extract_lane 0 (local.get $s1)) (f64x2.extract_lane 1 (local.get $s1)))))
      (f64.store offset=16 (local.get $o) (f64.add (f64.load offset=16 (local.get $o))
        (f64.add (f64x2.extract_lane 0 (local.get $s2)) (f64x2.extract_lane 1 (local.get $s2)))))
      (f64.store offset=24 (local.get $o) (f64.add (f64.load offset=24 (local.get $o))
        (f64.add (f64x2.extract_lane 0 (local.get $s3)) (f64x2.extract_lane 1 (local.get $s3)))))
      (local.set $i (i32.add (local.get $i) (i32.const 4)))
      (br $groups)))
    (block $singlesDone (loop $singles
      (br_if $singlesDone (i32.ge_s (local.get $i) (local.get $count)))
      (local.set $a0 (i32.load (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $s0 (v128.const f64x2 0 0))
      (local.set $t (i32.shl (local.get $start) (i32.const 3)))
      (block $rowsDone (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
        (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul
          (v128.load (i32.add (local.get $w) (local.get $t)))
          (v128.load (i32.add (local.get $a0) (local.get $t))))))
        (local.set $t (i32.add (local.get $t) (i32.const 16)))
        (br $rows)))
      (local.set $o (i32.add (local.get $out) (i32.shl (local.get $i) (i32.const 3))))
      (f64.store (local.get $o) (f64.add (f64.load (local.get $o))
        (f64.add (f64x2.extract_lane 0 (local.get $s0)) (f64x2.extract_lane 1 (local.get $s0)))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $singles)))
  )

  ;; w[t] -= sum_i coef[i] a_i[t]
  (func (export "subtractReal") (param $w i32) (param $set i32) (param $count i32) (param $coef i32) (param $start i32) (param $end i32)
    (local $i i32) (local $t i32) (local $stop i32) (local $p i32) (local $c i32)
    (local $a0 i32) (local $a1 i32) (local $a2 i32) (local $a3 i32)
    (local $c0 v128) (local $c1 v128) (local $c2 v128) (local $c3 v128)
    (local.set $stop (i32.shl (local.get $end) (i32.const 3)))
    (block $groupsDone (loop $groups
      (br_if $groupsDone (i32.gt_s (i32.add (local.get $i) (i32.const 4)) (local.get $count)))
      (local.set $a0 (i32.load (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $a1 (i32.load offset=4 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $a2 (i32.load offset=8 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $a3 (i32.load offset=12 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $c (i32.add (local.get $coef) (i32.shl (local.get $i) (i32.const 3))))
      (local.set $c0 (f64x2.splat (f64.load (local.get $c))))
      (local.set $c1 (f64x2.splat (f64.load offset=8 (local.get $c))))
      (local.set $c2 (f64x2.splat (f64.load offset=16 (local.get $c))))
      (local.set $c3 (f64x2.splat (f64.load offset=24 (local.get $c))))
      (local.set $t (i32.shl (local.get $start) (i32.const 3)))
      (block $rowsDone (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
        (local.set $p (i32.add (local.get $w) (local.get $t)))
        (v128.store (local.get $p) (f64x2.sub (v128.load (local.get $p))
          (f64x2.add
            (f64x2.add
              (f64x2.mul (local.get $c0) (v128.load (i32.add (local.get $a0) (local.get $t))))
              (f64x2.mul (local.get $c1) (v128.load (i32.add (local.get $a1) (local.get $t)))))
            (f64x2.add
              (f64x2.mul (local.get $c2) (v128.load (i32.add (local.get $a2) (local.get $t))))
              (f64x2.mul (local.get $c3) (v128.load (i32.add (local.get $a3) (local.get $t))))))))
        (local.set $t (i32.add (local.get $t) (i32.const 16)))
        (br $rows)))
      (local.set $i (i32.add (local.get $i) (i32.const 4)))
      (br $groups)))
    (block $singlesDone (loop $singles
      (br_if $singlesDone (i32.ge_s (local.get $i) (local.get $count)))
      (local.set $a0 (i32.load (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $c0 (f64x2.splat (f64.load (i32.add (local.get $coef) (i32.shl (local.get $i) (i32.const 3))))))
      (local.set $t (i32.shl (local.get $start) (i32.const 3)))
      (block $rowsDone (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
        (local.set $p (i32.add (local.get $w) (local.get $t)))
        (v128.store (local.get $p) (f64x2.sub (v128.load (local.get $p))
          (f64x2.mul (local.get $c0) (v128.load (i32.add (local.get $a0) (local.get $t))))))
        (local.set $t (i32.add (local.get $t) (i32.const 16)))
        (br $rows)))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $singles)))
  )

  ;; out[2i] + i out[2i+1] += sum_t conj(a_i[t]) w[t]. With a = (ar, ai) and x = (wr, wi):
  ;; a*x = (ar wr, ai wi) sums to the real part; a*swap(x) = (ar wi, ai wr) gives the imaginary
  ;; part as lane 0 minus lane 1.
  (func (export "dotsComplex") (param $w i32) (param $set i32) (param $count i32) (param $out i32) (param $start i32) (param $end i32)
    (local $i i32) (local $t i32) (local $stop i32) (local $x v128) (local $xs v128) (local $a v128) (local $o i32)
    (local $a0 i32) (local $a1 i32)
    (local $r0 v128) (local $m0 v128) (local $r1 v128) (local $m1 v128)
    (local.set $stop (i32.shl (local.get $end) (i32.const 3)))
    (block $groupsDone (loop $groups
      (br_if $groupsDone (i32.gt_s (i32.add (local.get $i) (i32.const 2)) (local.get $count)))
      (local.set $a0 (i32.load (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $a1 (i32.load offset=4 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $r0 (v128.const f64x2 0 0))
      (local.set $m0 (v128.const f64x2 0 0))
      (local.set $r1 (v128.const f64x2 0 0))
      (local.set $m1 (v128.const f64x2 0 0))
      (local.set $t (i32.shl (local.get $start) (i32.const 3)))
      (block $rowsDone (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
        (local.set $x (v128.load (i32.add (local.get $w) (local.get $t))))
        (local.set $xs (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $x) (local.get $x)))
        (local.set $a (v128.load (i32.add (local.get $a0) (local.get $t))))
        (local.set $r0 (f64x2.add (local.get $r0) (f64x2.mul (local.get $a) (local.get $x))))
        (local.set $m0 (f64x2.add (local.get $m0) (f64x2.mul (local.get $a) (local.get $xs))))
        (local.set $a (v128.load (i32.add (local.get $a1) (local.get $t))))
        (local.set $r1 (f64x2.add (local.get $r1) (f64x2.mul (local.get $a) (local.get $x))))
        (local.set $m1 (f64x2.add (local.get $m1) (f64x2.mul (local.get $a) (local.get $xs))))
        (local.set $t (i32.add (local.get $t) (i32.const 16)))
        (br $rows)))
      (local.set $o (i32.add (local.get $out) (i32.shl (local.get $i) (i32.const 4))))
      (f64.store (local.get $o) (f64.add (f64.load (local.get $o))
        (f64.add (f64x2.extract_lane 0 (local.get $r0)) (f64x2.extract_lane 1 (local.get $r0)))))
      (f64.store offset=8 (local.get $o) (f64.add (f64.load offset=8 (local.get $o))
        (f64.sub (f64x2.extract_lane 0 (local.get $m0)) (f64x2.extract_lane 1 (local.get $m0)))))
      (f64.store offset=16 (local.get $o) (f64.add (f64.load offset=16 (local.get $o))
        (f64.add (f64x2.extract_lane 0 (local.get $r1)) (f64x2.extract_lane 1 (local.get $r1)))))
      (f64.store offset=24 (local.get $o) (f64.add (f64.load offset=24 (local.get $o))
        (f64.sub (f64x2.extract_lane 0 (local.get $m1)) (f64x2.extract_lane 1 (local.get $m1)))))
      (local.set $i (i32.add (local.get $i) (i32.const 2)))
      (br $groups)))
    (block $singlesDone (loop $singles
      (br_if $singlesDone (i32.ge_s (local.get $i) (local.get $count)))
      (local.set $a0 (i32.load (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $r0 (v128.const f64x2 0 0))
      (local.set $m0 (v128.const f64x2 0 0))
      (local.set $t (i32.shl (local.get $start) (i32.const 3)))
      (block $rowsDone (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
        (local.set $x (v128.load (i32.add (local.get $w) (local.get $t))))
        (local.set $xs (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $x) (local.get $x)))
        (local.set $a (v128.load (i32.add (local.get $a0) (local.get $t))))
        (local.set $r0 (f64x2.add (local.get $r0) (f64x2.mul (local.get $a) (local.get $x))))
        (local.set $m0 (f64x2.add (local.get $m0) (f64x2.mul (local.get $a) (local.get $xs))))
        (local.set $t (i32.add (local.get $t) (i32.const 16)))
        (br $rows)))
      (local.set $o (i32.add (local.get $out) (i32.shl (local.get $i) (i32.const 4))))
      (f64.store (local.get $o) (f64.add (f64.load (local.get $o))
        (f64.add (f64x2.extract_lane 0 (local.get $r0)) (f64x2.extract_lane 1 (local.get $r0)))))
      (f64.store offset=8 (local.get $o) (f64.add (f64.load offset=8 (local.get $o))
        (f64.sub (f64x2.extract_lane 0 (local.get $m0)) (f64x2.extract_lane 1 (local.get $m0)))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $singles)))
  )

  ;; w -= sum_i c_i a_i with complex c_i = (cr, ci): per entry, c a = cr (ar, ai) + ci (-ai, ar),
  ;; so with s = swap(a) = (ai, ar) the update is cr*a + (-ci, ci)*s.
  (func (export "subtractComplex") (param $w i32) (param $set i32) (param $count i32) (param $coef i32) (param $start i32) (param $end i32)
    (local $i i32) (local $t i32) (local $stop i32) (local $p i32) (local $c i32) (local $a v128)
    (local $a0 i32) (local $a1 i32)
    (local $cr0 v128) (local $ci0 v128) (local $cr1 v128) (local $ci1 v128)
    (local.set $stop (i32.shl (local.get $end) (i32.const 3)))
    (block $groupsDone (loop $groups
      (br_if $groupsDone (i32.gt_s (i32.add (local.get $i) (i32.const 2)) (local.get $count)))
      (local.set $a0 (i32.load (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $a1 (i32.load offset=4 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $c (i32.add (local.get $coef) (i32.shl (local.get $i) (i32.const 4))))
      (local.set $cr0 (f64x2.splat (f64.load (local.get $c))))
      (local.set $ci0 (f64x2.replace_lane 0 (f64x2.splat (f64.load offset=8 (local.get $c))) (f64.neg (f64.load offset=8 (local.get $c)))))
      (local.set $cr1 (f64x2.splat (f64.load offset=16 (local.get $c))))
      (local.set $ci1 (f64x2.replace_lane 0 (f64x2.splat (f64.load offset=24 (local.get $c))) (f64.neg (f64.load offset=24 (local.get $c)))))
      (local.set $t (i32.shl (local.get $start) (i32.const 3)))
      (block $rowsDone (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
        (local.set $p (i32.add (local.get $w) (local.get $t)))
        (local.set $a (v128.load (i32.add (local.get $a0) (local.get $t))))
        (v128.store (local.get $p) (f64x2.sub (v128.load (local.get $p))
          (f64x2.add
            (f64x2.mul (local.get $cr0) (local.get $a))
            (f64x2.mul (local.get $ci0) (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $a) (local.get $a))))))
        (local.set $a (v128.load (i32.add (local.get $a1) (local.get $t))))
        (v128.store (local.get $p) (f64x2.sub (v128.load (local.get $p))
          (f64x2.add
            (f64x2.mul (local.get $cr1) (local.get $a))
            (f64x2.mul (local.get $ci1) (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $a) (local.get $a))))))
        (local.set $t (i32.add (local.get $t) (i32.const 16)))
        (br $rows)))
      (local.set $i (i32.add (local.get $i) (i32.const 2)))
      (br $groups)))
    (block $singlesDone (loop $singles
      (br_if $singlesDone (i32.ge_s (local.get $i) (local.get $count)))
      (local.set $a0 (i32.load (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $c (i32.add (local.get $coef) (i32.shl (local.get $i) (i32.const 4))))
      (local.set $cr0 (f64x2.splat (f64.load (local.get $c))))
      (local.set $ci0 (f64x2.replace_lane 0 (f64x2.splat (f64.load offset=8 (local.get $c))) (f64.neg (f64.load offset=8 (local.get $c)))))
      (local.set $t (i32.shl (local.get $start) (i32.const 3)))
      (block $rowsDone (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
        (local.set $p (i32.add (local.get $w) (local.get $t)))
        (local.set $a (v128.load (i32.add (local.get $a0) (local.get $t))))
        (v128.store (local.get $p) (f64x2.sub (v128.load (local.get $p))
          (f64x2.add
            (f64x2.mul (local.get $cr0) (local.get $a))
            (f64x2.mul (local.get $ci0) (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $a) (local.get $a))))))
        (local.set $t (i32.add (local.get $t) (i32.const 16)))
        (br $rows)))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $singles)))
  )

  ;; y[0..count) += h x[0..count): the runs of a Hamiltonian term applied on the fly.
  (func (export "axpy") (param $y i32) (param $x i32) (param $h f64) (param $count i32)
    (local $t i32) (local $stop i32) (local $hv v128) (local $p i32)
    (local.set $hv (f64x2.splat (local.get $h)))
    (local.set $stop (i32.shl (i32.and (local.get $count) (i32.const -2)) (i32.const 3)))
    (block $rowsDone (loop $rows
      (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
      (local.set $p (i32.add (local.get $y) (local.get $t)))
      (v128.store (local.get $p) (f64x2.add (v128.load (local.get $p))
        (f64x2.mul (local.get $hv) (v128.load (i32.add (local.get $x) (local.get $t))))))
      (local.set $t (i32.add (local.get $t) (i32.const 16)))
      (br $rows)))
    (if (i32.and (local.get $count) (i32.const 1))
      (then
        (local.set $p (i32.add (local.get $y) (local.get $stop)))
        (f64.store (local.get $p) (f64.add (f64.load (local.get $p))
          (f64.mul (local.get $h) (f64.load (i32.add (local.get $x) (local.get $stop))))))))
  )

  ;; Complex y += h x over `count` interleaved entries: h x = hr (xr, xi) + hi (-xi, xr).
  (func (export "caxpy") (param $y i32) (param $x i32) (param $hr f64) (param $hi f64) (param $count i32)
    (local $t i32) (local $stop i32) (local $r v128) (local $m v128) (local $a v128) (local $p i32)
    (local.set $r (f64x2.splat (local.get $hr)))
    (local.set $m (f64x2.replace_lane 0 (f64x2.splat (local.get $hi)) (f64.neg (local.get $hi))))
    (local.set $stop (i32.shl (local.get $count) (i32.const 4)))
    (block $rowsDone (loop $rows
      (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
      (local.set $p (i32.add (local.get $y) (local.get $t)))
      (local.set $a (v128.load (i32.add (local.get $x) (local.get $t))))
      (v128.store (local.get $p) (f64x2.add (v128.load (local.get $p))
        (f64x2.add
          (f64x2.mul (local.get $r) (local.get $a))
          (f64x2.mul (local.get $m) (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $a) (local.get $a))))))
      (local.set $t (i32.add (local.get $t) (i32.const 16)))
      (br $rows)))
  )

  ;; The pinned operator's block pass over rows [lo, hi): y[s] = diag[s] x[s] + sum_k val[k] x[base + col[k]]
  ;; for the rows r = s - base of one cached block of B states (the same sparse rows in every
  ;; block). Lane 0 of one register sums the diagonal term and terms 0, 2, 4, ... of the row, lane 1
  ;; terms 1, 3, 5, ...; y[s] is their sum, in the JavaScript loop's order: same bits.
  (func (export "blockPassReal") (param $y i32) (param $x i32) (param $diag i32) (param $rs i32) (param $col i32) (param $val i32)
      (param $B i32) (param $lo i32) (param $hi i32)
    (local $base i32) (local $r i32) (local $r1 i32) (local $s i32) (local $k i32) (local $end i32) (local $sum f64) (local $xb i32)
    (local $acc v128) (local $last i32)
    (local.set $base (i32.sub (local.get $lo) (i32.rem_u (local.get $lo) (local.get $B))))
    (block $blocksDone (loop $blocks
      (br_if $blocksDone (i32.ge_u (local.get $base) (local.get $hi)))
      (local.set $r (select (i32.sub (local.get $lo) (local.get $base)) (i32.const 0) (i32.lt_u (local.get $base) (local.get $lo))))
      (local.set $r1 (select (i32.sub (local.get $hi) (local.get $base)) (local.get $B)
        (i32.gt_u (i32.add (local.get $base) (local.get $B)) (local.get $hi))))
      (local.set $xb (i32.add (local.get $x) (i32.shl (local.get $base) (i32.const 3))))
      (block $rowsDone (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $r) (local.get $r1)))
        (local.set $s (i32.shl (i32.add (local.get $base) (local.get $r)) (i32.const 3)))
        ;; lane 0: the diagonal term, then terms 0, 2, 4, ... of the row; lane 1: terms 1, 3, 5, ...
        (local.set $acc (f64x2.replace_lane 0 (v128.const i64x2 0 0)
          (f64.mul (f64.load (i32.add (local.get $diag) (local.get $s))) (f64.load (i32.add (local.get $x) (local.get $s))))))
        (local.set $k (i32.load (i32.add (local.get $rs) (i32.shl (local.get $r) (i32.const 2)))))
        (local.set $end (i32.load offset=4 (i32.add (local.get $rs) (i32.shl (local.get $r) (i32.const 2)))))
        (local.set $last (i32.sub (local.get $end) (i32.const 1)))
        (block $pairsDone (loop $pairs
          (br_if $pairsDone (i32.ge_s (local.get $k) (local.get $last)))
          (local.set $acc (f64x2.add (local.get $acc) (f64x2.mul
            (v128.load (i32.add (local.get $val) (i32.shl (local.get $k) (i32.const 3))))
            (f64x2.replace_lane 1
              (v128.load64_splat (i32.add (local.get $xb) (i32.shl (i32.load (i32.add (local.get $col) (i32.shl (local.get $k) (i32.const 2)))) (i32.const 3))))
              (f64.load (i32.add (local.get $xb) (i32.shl (i32.load offset=4 (i32.add (local.get $col) (i32.shl (local.get $k) (i32.const 2)))) (i32.const 3))))))))
          (local.set $k (i32.add (local.get $k) (i32.const 2)))
          (br $pairs)))
        (local.set $sum (f64x2.extract_lane 0 (local.get $acc)))
        (if (i32.lt_u (local.get $k) (local.get $end)) (then
          (local.set $sum (f64.add (local.get $sum) (f64.mul
            (f64.load (i32.add (local.get $val) (i32.shl (local.get $k) (i32.const 3))))
            (f64.load (i32.add (local.get $xb) (i32.shl (i32.load (i32.add (local.get $col) (i32.shl (local.get $k) (i32.const 2)))) (i32.const 3)))))))))
        (f64.store (i32.add (local.get $y) (local.get $s)) (f64.add (local.get $sum) (f64x2.extract_lane 1 (local.get $acc))))
        (local.set $r (i32.add (local.get $r) (i32.const 1)))
        (br $rows)))
      (local.set $base (i32.add (local.get $base) (local.get $B)))
      (br $blocks)))
  )

  ;; The same for complex vectors (interleaved re, im) with complex entries (re[k], im[k]), one
  ;; complex number per register as in csrComplex; two sums take the terms in turn (the first
  ;; starts from the diagonal term), as the JavaScript loop adds them.
  (func (export "blockPassComplex") (param $y i32) (param $x i32) (param $diag i32) (param $rs i32) (param $col i32) (param $re i32)
      (param $im i32) (param $B i32) (param $lo i32) (param $hi i32)
    (local $base i32) (local $r i32) (local $r1 i32) (local $s i32) (local $k i32) (local $end i32) (local $xb i32)
    (local $acc0 v128) (local $acc1 v128) (local $next v128) (local $xv v128)
    (local.set $base (i32.sub (local.get $lo) (i32.rem_u (local.get $lo) (local.get $B))))
    (block $blocksDone (loop $blocks
      (br_if $blocksDone (i32.ge_u (local.get $base) (local.get $hi)))
      (local.set $r (select (i32.sub (local.get $lo) (local.get $base)) (i32.const 0) (i32.lt_u (local.get $base) (local.get $lo))))
      (local.set $r1 (select (i32.sub (local.get $hi) (local.get $base)) (local.get $B)
        (i32.gt_u (i32.add (local.get $base) (local.get $B)) (local.get $hi))))
      (local.set $xb (i32.add (local.get $x) (i32.shl (local.get $base) (i32.const 4))))
      (block $rowsDone (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $r) (local.get $r1)))
        (local.set $s (i32.add (local.get $base) (local.get $r)))
        (local.set $acc0 (f64x2.mul (v128.load64_splat (i32.add (local.get $diag) (i32.shl (local.get $s) (i32.const 3))))
          (v128.load (i32.add (local.get $x) (i32.shl (local.get $s) (i32.const 4))))))
        (local.set $acc1 (v128.const i64x2 0 0))
        (local.set $k (i32.load (i32.add (local.get $rs) (i32.shl (local.get $r) (i32.const 2)))))
        (local.set $end (i32.load offset=4 (i32.add (local.get $rs) (i32.shl (local.get $r) (i32.const 2)))))
        (block $termsDone (loop $terms
          (br_if $termsDone (i32.ge_u (local.get $k) (local.get $end)))
          (local.set $xv (v128.load (i32.add (local.get $xb) (i32.shl (i32.load (i32.add (local.get $col) (i32.shl (local.get $k) (i32.const 2)))) (i32.const 4)))))
          (local.set $next (f64x2.add (local.get $acc0) (f64x2.add
            (f64x2.mul (v128.load64_splat (i32.add (local.get $re) (i32.shl (local.get $k) (i32.const 3)))) (local.get $xv))
            (f64x2.mul (v128.load64_splat (i32.add (local.get $im) (i32.shl (local.get $k) (i32.const 3))))
              (v128.xor (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $xv) (local.get $xv))
                (v128.const i64x2 0x8000000000000000 0))))))
          (local.set $acc0 (local.get $acc1))
          (local.set $acc1 (local.get $next))
          (local.set $k (i32.add (local.get $k) (i32.const 1)))
          (br $terms)))
        (v128.store (i32.add (local.get $y) (i32.shl (local.get $s) (i32.const 4))) (f64x2.add (local.get $acc0) (local.get $acc1)))
        (local.set $r (i32.add (local.get $r) (i32.const 1)))
        (br $rows)))
      (local.set $base (i32.add (local.get $base) (local.get $B)))
      (br $blocks)))
  )

  ;; A stored sparse matrix in compressed rows, rows [lo, hi): y[r] = sum_k val[k] x[col[k]] (row
  ;; starts are doubles, as in CsrOperator). Two running sums take the terms in turn (the first
  ;; gets terms 0, 2, 4, ... of the row), so each waits for an addition only every other term;
  ;; y[r] is their sum. The JavaScript loop adds in the same order: same bits.
  (func (export "csrReal") (param $y i32) (param $x i32) (param $rs i32) (param $col i32) (param $val i32) (param $lo i32) (param $hi i32)
    (local $r i32) (local $k i32) (local $end i32) (local $acc v128) (local $last i32) (local $sum f64)
    (local.set $r (local.get $lo))
    (local.set $end (i32.trunc_f64_u (f64.load (i32.add (local.get $rs) (i32.shl (local.get $r) (i32.const 3))))))
    (block $rowsDone (loop $rows
      (br_if $rowsDone (i32.ge_u (local.get $r) (local.get $hi)))
      (local.set $k (local.get $end))
      (local.set $end (i32.trunc_f64_u (f64.load offset=8 (i32.add (local.get $rs) (i32.shl (local.get $r) (i32.const 3))))))
      ;; lane 0 sums terms 0, 2, 4, ... of the row, lane 1 terms 1, 3, 5, ...
      (local.set $acc (v128.const i64x2 0 0))
      (local.set $last (i32.sub (local.get $end) (i32.const 1)))
      (block $pairsDone (loop $pairs
        (br_if $pairsDone (i32.ge_s (local.get $k) (local.get $last)))
        (local.set $acc (f64x2.add (local.get $acc) (f64x2.mul
          (v128.load (i32.add (local.get $val) (i32.shl (local.get $k) (i32.const 3))))
          (f64x2.replace_lane 1
            (v128.load64_splat (i32.add (local.get $x) (i32.shl (i32.load (i32.add (local.get $col) (i32.shl (local.get $k) (i32.const 2)))) (i32.const 3))))
            (f64.load (i32.add (local.get $x) (i32.shl (i32.load offset=4 (i32.add (local.get $col) (i32.shl (local.get $k) (i32.const 2)))) (i32.const 3))))))))
        (local.set $k (i32.add (local.get $k) (i32.const 2)))
        (br $pairs)))
      (local.set $sum (f64x2.extract_lane 0 (local.get $acc)))
      ;; an odd term count leaves the last term, an even offset: lane 0's
      (if (i32.lt_u (local.get $k) (local.get $end)) (then
        (local.set $sum (f64.add (local.get $sum) (f64.mul
          (f64.load (i32.add (local.get $val) (i32.shl (local.get $k) (i32.const 3))))
          (f64.load (i32.add (local.get $x) (i32.shl (i32.load (i32.add (local.get $col) (i32.shl (local.get $k) (i32.const 2)))) (i32.const 3)))))))))
      (f64.store (i32.add (local.get $y) (i32.shl (local.get $r) (i32.const 3))) (f64.add (local.get $sum) (f64x2.extract_lane 1 (local.get $acc))))
      (local.set $r (i32.add (local.get $r) (i32.const 1)))
      (br $rows)))
  )

  ;; The same with complex entries (re[k], im[k]) and interleaved complex vectors, one complex
  ;; number per register: (hr xr - hi xi, hr xi + hi xr) = hr (xr, xi) + hi (-xi, xr), the very
  ;; products and sums of the JavaScript loop (a + (-b) is a - b exactly).
  (func (export "csrComplex") (param $y i32) (param $x i32) (param $rs i32) (param $col i32) (param $re i32) (param $im i32)
      (param $lo i32) (param $hi i32)
    (local $r i32) (local $k i32) (local $end i32) (local $acc0 v128) (local $acc1 v128) (local $next v128) (local $xv v128)
    (local.set $r (local.get $lo))
    (local.set $end (i32.trunc_f64_u (f64.load (i32.add (local.get $rs) (i32.shl (local.get $r) (i32.const 3))))))
    (block $rowsDone (loop $rows
      (br_if $rowsDone (i32.ge_u (local.get $r) (local.get $hi)))
      (local.set $k (local.get $end))
      (local.set $end (i32.trunc_f64_u (f64.load offset=8 (i32.add (local.get $rs) (i32.shl (local.get $r) (i32.const 3))))))
      (local.set $acc0 (v128.const i64x2 0 0))
      (local.set $acc1 (v128.const i64x2 0 0))
      (block $termsDone (loop $terms
        (br_if $termsDone (i32.ge_u (local.get $k) (local.get $end)))
        (local.set $xv (v128.load (i32.add (local.get $x) (i32.shl (i32.load (i32.add (local.get $col) (i32.shl (local.get $k) (i32.const 2)))) (i32.const 4)))))
        (local.set $next (f64x2.add (local.get $acc0) (f64x2.add
          (f64x2.mul (v128.load64_splat (i32.add (local.get $re) (i32.shl (local.get $k) (i32.const 3)))) (local.get $xv))
          (f64x2.mul (v128.load64_splat (i32.add (local.get $im) (i32.shl (local.get $k) (i32.const 3))))
            ;; (xi, xr) with the sign of the first lane flipped: (-xi, xr)
            (v128.xor (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $xv) (local.get $xv))
              (v128.const i64x2 0x8000000000000000 0))))))
        (local.set $acc0 (local.get $acc1))
        (local.set $acc1 (local.get $next))
        (local.set $k (i32.add (local.get $k) (i32.const 1)))
        (br $terms)))
      (v128.store (i32.add (local.get $y) (i32.shl (local.get $r) (i32.const 4))) (f64x2.add (local.get $acc0) (local.get $acc1)))
      (local.set $r (i32.add (local.get $r) (i32.const 1)))
      (br $rows)))
  )

  ;; sum_t w[t]^2
  (func (export "normSquared") (param $w i32) (param $start i32) (param $end i32) (result f64)
    (local $t i32) (local $stop i32) (local $s v128) (local $x v128)
    (local.set $t (i32.shl (local.get $start) (i32.const 3)))
    (local.set $stop (i32.shl (local.get $end) (i32.const 3)))
    (block $rowsDone (loop $rows
      (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
      (local.set $x (v128.load (i32.add (local.get $w) (local.get $t))))
      (local.set $s (f64x2.add (local.get $s) (f64x2.mul (local.get $x) (local.get $x))))
      (local.set $t (i32.add (local.get $t) (i32.const 16)))
      (br $rows)))
    (f64.add (f64x2.extract_lane 0 (local.get $s)) (f64x2.extract_lane 1 (local.get $s)))
  )

  ;; For c < keep: target[c][t] = sum_{i<size} y[i*ys + c] a_i[t] over t in [start, end), written to
  ;; scratch (keep rows of end-start doubles) first, so that it may overwrite the a_i in place.
  ;; Coefficients are real; complex vectors are combined entry by entry alike.
  (func (export "combine") (param $set i32) (param $size i32) (param $y i32) (param $ys i32) (param $keep i32)
      (param $scratch i32) (param $start i32) (param $end i32)
    (local $c i32) (local $i i32) (local $t i32) (local $stop i32) (local $row i32) (local $width i32) (local $p i32)
    (local $a0 i32) (local $a1 i32) (local $a2 i32) (local $a3 i32)
    (local $y0 v128) (local $y1 v128) (local $y2 v128) (local $y3 v128)
    (local.set $width (i32.shl (i32.sub (local.get $end) (local.get $start)) (i32.const 3)))
    (local.set $stop (i32.shl (local.get $end) (i32.const 3)))
    (block $columnsDone (loop $columns
      (br_if $columnsDone (i32.ge_s (local.get $c) (local.get $keep)))
      ;; row: where this column's block starts in scratch, shifted so that row + t addresses entry t
      (local.set $row (i32.sub (i32.add (local.get $scratch) (i32.mul (local.get $c) (local.get $width)))
        (i32.shl (local.get $start) (i32.const 3))))
      (local.set $t (i32.shl (local.get $start) (i32.const 3)))
      (block $zeroDone (loop $zero
        (br_if $zeroDone (i32.ge_u (local.get $t) (local.get $stop)))
        (v128.store (i32.add (local.get $row) (local.get $t)) (v128.const f64x2 0 0))
        (local.set $t (i32.add (local.get $t) (i32.const 16)))
        (br $zero)))
      (local.set $i (i32.const 0))
      (block $groupsDone (loop $groups
        (br_if $groupsDone (i32.gt_s (i32.add (local.get $i) (i32.const 4)) (local.get $size)))
        (local.set $a0 (i32.load (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
        (local.set $a1 (i32.load offset=4 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
        (local.set $a2 (i32.load offset=8 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
        (local.set $a3 (i32.load offset=12 (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
        (local.set $p (i32.add (local.get $y) (i32.shl (i32.add (i32.mul (local.get $i) (local.get $ys)) (local.get $c)) (i32.const 3))))
        (local.set $y0 (f64x2.splat (f64.load (local.get $p))))
        (local.set $p (i32.add (local.get $p) (i32.shl (local.get $ys) (i32.const 3))))
        (local.set $y1 (f64x2.splat (f64.load (local.get $p))))
        (local.set $p (i32.add (local.get $p) (i32.shl (local.get $ys) (i32.const 3))))
        (local.set $y2 (f64x2.splat (f64.load (local.get $p))))
        (local.set $p (i32.add (local.get $p) (i32.shl (local.get $ys) (i32.const 3))))
        (local.set $y3 (f64x2.splat (f64.load (local.get $p))))
        (local.set $t (i32.shl (local.get $start) (i32.const 3)))
        (block $rowsDone (loop $rows
          (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
          (local.set $p (i32.add (local.get $row) (local.get $t)))
          (v128.store (local.get $p) (f64x2.add (v128.load (local.get $p))
            (f64x2.add
              (f64x2.add
                (f64x2.mul (local.get $y0) (v128.load (i32.add (local.get $a0) (local.get $t))))
                (f64x2.mul (local.get $y1) (v128.load (i32.add (local.get $a1) (local.get $t)))))
              (f64x2.add
                (f64x2.mul (local.get $y2) (v128.load (i32.add (local.get $a2) (local.get $t))))
                (f64x2.mul (local.get $y3) (v128.load (i32.add (local.get $a3) (local.get $t))))))))
          (local.set $t (i32.add (local.get $t) (i32.const 16)))
          (br $rows)))
        (local.set $i (i32.add (local.get $i) (i32.const 4)))
        (br $groups)))
      (block $singlesDone (loop $singles
        (br_if $singlesDone (i32.ge_s (local.get $i) (local.get $size)))
        (local.set $a0 (i32.load (i32.add (local.get $set) (i32.shl (local.get $i) (i32.const 2)))))
        (local.set $y0 (f64x2.splat (f64.load (i32.add (local.get $y)
          (i32.shl (i32.add (i32.mul (local.get $i) (local.get $ys)) (local.get $c)) (i32.const 3))))))
        (local.set $t (i32.shl (local.get $start) (i32.const 3)))
        (block $rowsDone (loop $rows
          (br_if $rowsDone (i32.ge_u (local.get $t) (local.get $stop)))
          (local.set $p (i32.add (local.get $row) (local.get $t)))
          (v128.store (local.get $p) (f64x2.add (v128.load (local.get $p))
            (f64x2.mul (local.get $y0) (v128.load (i32.add (local.get $a0) (local.get $t))))))
          (local.set $t (i32.add (local.get $t) (i32.const 16)))
          (br $rows)))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $singles)))
      (local.set $c (i32.add (local.get $c) (i32.const 1)))
      (br $columns)))
    ;; copy the block back: target c = set[c]
    (local.set $c (i32.const 0))
    (block $copyDone (loop $copy
      (br_if $copyDone (i32.ge_s (local.get $c) (local.get $keep)))
      (memory.copy
        (i32.add (i32.load (i32.add (local.get $set) (i32.shl (local.get $c) (i32.const 2)))) (i32.shl (local.get $start) (i32.const 3)))
        (i32.add (local.get $scratch) (i32.mul (local.get $c) (local.get $width)))
        (local.get $width))
      (local.set $c (i32.add (local.get $c) (i32.const 1)))
      (br $copy)))
  )

  ;; y[t] *= s over `count` doubles (the same multiply per entry as the JavaScript loop).
  (func (export "scale") (param $y i32) (param $s f64) (param $count i32)
    (local $t i32) (local $stop i32) (local $sv v128) (local $p i32)
    (local.set $sv (f64x2.splat (local.get $s)))
    (local.set $stop (i32.shl (i32.and (local.get $count) (i32.const -2)) (i32.const 3)))
    (block $done (loop $entries
      (br_if $done (i32.ge_u (local.get $t) (local.get $stop)))
      (local.set $p (i32.add (local.get $y) (local.get $t)))
      (v128.store (local.get $p) (f64x2.mul (v128.load (local.get $p)) (local.get $sv)))
      (local.set $t (i32.add (local.get $t) (i32.const 16)))
      (br $entries)))
    (if (i32.and (local.get $count) (i32.const 1))
      (then
        (local.set $p (i32.add (local.get $y) (local.get $stop)))
        (f64.store (local.get $p) (f64.mul (f64.load (local.get $p)) (local.get $s)))))
  )
)
