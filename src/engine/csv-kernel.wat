;; The hot loops of reading a delimited file outside the engine, as WebAssembly: the aligned scan's
;; count of the old file (`count`, see countStretch in src/diff/old-rows.ts), with the type-fit rules
;; of column-types.ts for raw UTF-8 bytes written into it (text-fits.ts asks it of single values),
;; and its comparison of two files (`sameBytes`). The same in JavaScript took about twice as long a
;; byte, and Node's Buffer.compare costs more to call than to compare a line; ten million rows are a
;; billion bytes.
;;
;; Compiled by `npm run wasm` (scripts/wasm.js) into csv-kernel-wasm.ts; a test checks that file
;; against this one. csv-kernel.ts lays out the memory.
;;
;; Fit flags: 1 integer, 2 number, 4 boolean, 8 date, 16 unsure (the engine's casts must decide);
;; see text-fits.ts.
(module
  (memory (export "memory") 1)

  ;; The fits of [s, e), four digits and a '-' already seen: a date if YYYY-MM-DD is a real day.
  (func $date (param $s i32) (param $e i32) (result i32)
    (local $m1 i32) (local $m2 i32) (local $d1 i32) (local $d2 i32) (local $year i32) (local $month i32) (local $day i32) (local $days i32)
    (if (i32.or (i32.ne (i32.sub (local.get $e) (local.get $s)) (i32.const 10))
                (i32.ne (i32.load8_u offset=7 (local.get $s)) (i32.const 45)))
      (then (return (i32.const 0))))
    (local.set $m1 (i32.sub (i32.load8_u offset=5 (local.get $s)) (i32.const 48)))
    (local.set $m2 (i32.sub (i32.load8_u offset=6 (local.get $s)) (i32.const 48)))
    (local.set $d1 (i32.sub (i32.load8_u offset=8 (local.get $s)) (i32.const 48)))
    (local.set $d2 (i32.sub (i32.load8_u offset=9 (local.get $s)) (i32.const 48)))
    (if (i32.or (i32.or (i32.gt_u (local.get $m1) (i32.const 9)) (i32.gt_u (local.get $m2) (i32.const 9)))
                (i32.or (i32.gt_u (local.get $d1) (i32.const 9)) (i32.gt_u (local.get $d2) (i32.const 9))))
      (then (return (i32.const 0))))
    (local.set $year (i32.add
      (i32.add (i32.mul (i32.sub (i32.load8_u (local.get $s)) (i32.const 48)) (i32.const 1000))
               (i32.mul (i32.sub (i32.load8_u offset=1 (local.get $s)) (i32.const 48)) (i32.const 100)))
      (i32.add (i32.mul (i32.sub (i32.load8_u offset=2 (local.get $s)) (i32.const 48)) (i32.const 10))
               (i32.sub (i32.load8_u offset=3 (local.get $s)) (i32.const 48)))))
    (local.set $month (i32.add (i32.mul (local.get $m1) (i32.const 10)) (local.get $m2)))
    (local.set $day (i32.add (i32.mul (local.get $d1) (i32.const 10)) (local.get $d2)))
    ;; Year 0000 is read as 1 BC: the engine decides.
    (if (i32.eqz (local.get $year)) (then (return (i32.const 16))))
    (if (i32.or (i32.or (i32.lt_u (local.get $month) (i32.const 1)) (i32.gt_u (local.get $month) (i32.const 12)))
                (i32.lt_u (local.get $day) (i32.const 1)))
      (then (return (i32.const 0))))
    ;; The proleptic Gregorian calendar (the engine's DATE).
    (local.set $days (i32.const 31))
    (if (i32.or (i32.or (i32.eq (local.get $month) (i32.const 4)) (i32.eq (local.get $month) (i32.const 6)))
                (i32.or (i32.eq (local.get $month) (i32.const 9)) (i32.eq (local.get $month) (i32.const 11))))
      (then (local.set $days (i32.const 30))))
    (if (i32.eq (local.get $month) (i32.const 2))
      (then
        (local.set $days
          (select (i32.const 29) (i32.const 28)
            (i32.and (i32.eqz (i32.rem_u (local.get $year) (i32.const 4)))
              (i32.or (i32.ne (i32.rem_u (local.get $year) (i32.const 100)) (i32.const 0))
                      (i32.eqz (i32.rem_u (local.get $year) (i32.const 400)))))))))
    (select (i32.const 8) (i32.const 0) (i32.le_u (local.get $day) (local.get $days))))

  ;; The fits of [s, e), 4 or 5 bytes long: a boolean if "true" or "false" in any ASCII case.
  (func $boolean (param $s i32) (param $e i32) (result i32)
    (if (i32.eq (i32.sub (local.get $e) (local.get $s)) (i32.const 4))
      (then
        (return (select (i32.const 4) (i32.const 0)
          (i32.and
            (i32.and (i32.eq (i32.or (i32.load8_u (local.get $s)) (i32.const 32)) (i32.const 116))
                     (i32.eq (i32.or (i32.load8_u offset=1 (local.get $s)) (i32.const 32)) (i32.const 114)))
            (i32.and (i32.eq (i32.or (i32.load8_u offset=2 (local.get $s)) (i32.const 32)) (i32.const 117))
                     (i32.eq (i32.or (i32.load8_u offset=3 (local.get $s)) (i32.const 32)) (i32.const 101))))))))
    (select (i32.const 4) (i32.const 0)
      (i32.and
        (i32.and
          (i32.and (i32.eq (i32.or (i32.load8_u (local.get $s)) (i32.const 32)) (i32.const 102))
                   (i32.eq (i32.or (i32.load8_u offset=1 (local.get $s)) (i32.const 32)) (i32.const 97)))
          (i32.and (i32.eq (i32.or (i32.load8_u offset=2 (local.get $s)) (i32.const 32)) (i32.const 108))
                   (i32.eq (i32.or (i32.load8_u offset=3 (local.get $s)) (i32.const 32)) (i32.const 115))))
        (i32.eq (i32.or (i32.load8_u offset=4 (local.get $s)) (i32.const 32)) (i32.const 101)))))

  ;; How many bytes from $a and from $b are equal, at most $max: eight at a time, then one by one.
  ;; The aligned scan's walk skips identical runs of two files with this.
  (func (export "sameBytes") (param $a i32) (param $b i32) (param $max i32) (result i32)
    (local $same i32) (local $x i64)
    (block $tail
      (loop $words
        (br_if $tail (i32.gt_u (i32.add (local.get $same) (i32.const 8)) (local.get $max)))
        (local.set $x (i64.xor (i64.load (i32.add (local.get $a) (local.get $same)))
                               (i64.load (i32.add (local.get $b) (local.get $same)))))
        ;; Little-endian: the lowest set bit is in the first byte that differs.
        (if (i64.ne (local.get $x) (i64.const 0))
          (then (return (i32.add (local.get $same) (i32.wrap_i64 (i64.shr_u (i64.ctz (local.get $x)) (i64.const 3)))))))
        (local.set $same (i32.add (local.get $same) (i32.const 8)))
        (br $words)))
    (block $done
      (loop $bytes
        (br_if $done (i32.ge_u (local.get $same) (local.get $max)))
        (br_if $done (i32.ne (i32.load8_u (i32.add (local.get $a) (local.get $same)))
                             (i32.load8_u (i32.add (local.get $b) (local.get $same)))))
        (local.set $same (i32.add (local.get $same) (i32.const 1)))
        (br $bytes)))
    (local.get $same))

  (func $finish (param $h i32) (result i32)
    (local.set $h (i32.xor (local.get $h) (i32.shr_u (local.get $h) (i32.const 16))))
    (local.set $h (i32.mul (local.get $h) (i32.const 0x85ebca6b)))
    (i32.xor (local.get $h) (i32.shr_u (local.get $h) (i32.const 13))))

  ;; Count the whole lines in [pos, end), at least one, each ending in a newline: per row, its key's two hashes into
  ;; $first and $second; per column, one more in $counts (32 i32s a column) at the value's fits. $keys
  ;; holds a byte per column (1: part of the key); $special, 256 bytes, is 1 at the delimiter, the
  ;; newline and the quote. Returns the rows, or why the lines are unsuitable, as a negative code:
  ;; -1 quote inside an unquoted field, -2 line break inside quotes, -3 a line without CR LF,
  ;; -4 text after a closing quote, -5 ragged row, -6 missing or padded key, -7 quote in a key.
  (func (export "count")
    (param $pos i32) (param $end i32) (param $width i32) (param $crlf i32)
    (param $keys i32) (param $special i32) (param $counts i32) (param $first i32) (param $second i32) (result i32)
    (local $i i32) (local $byte i32) (local $column i32) (local $fieldStart i32) (local $closed i32)
    (local $h1 i32) (local $h2 i32) (local $rows i32) (local $vs i32) (local $ve i32) (local $j i32) (local $c i32) (local $at i32)
    (local $fit i32) (local $ds i32) (local $ch i32) (local $k i32) (local $digits i32) (local $lead i32) (local $b i32) (local $all i32) (local $f i32) (local $value i32)
    (local.set $fieldStart (local.get $pos))
    (local.set $closed (i32.const -1))
    (local.set $h1 (i32.const 0x811c9dc5))
    (local.set $h2 (i32.const 0x9e3779b9))
    (local.set $i (local.get $pos))
    (block $done
      (loop $next
        ;; On to the field's end. The lines end in a newline, so this stops by $end.
        (block $ends
          (loop $scan
            (local.set $byte (i32.load8_u (local.get $i)))
            (br_if $ends (i32.load8_u (i32.add (local.get $special) (local.get $byte))))
            (local.set $i (i32.add (local.get $i) (i32.const 1)))
            (br $scan)))
        (if (i32.eq (local.get $byte) (i32.const 34))
          (then
            (if (i32.ne (local.get $i) (local.get $fieldStart)) (then (return (i32.const -1))))
            ;; The closing quote: a doubled quote is one quote, and a line break first is an error.
            (local.set $at (i32.add (local.get $i) (i32.const 1)))
            (block $found
              (loop $seek
                (local.set $c (i32.load8_u (local.get $at)))
                (if (i32.eq (local.get $c) (i32.const 10)) (then (return (i32.const -2))))
                (if (i32.eq (local.get $c) (i32.const 34))
                  (then
                    (br_if $found (i32.ne (i32.load8_u offset=1 (local.get $at)) (i32.const 34)))
                    (local.set $at (i32.add (local.get $at) (i32.const 2)))
                    (br $seek)))
                (local.set $at (i32.add (local.get $at) (i32.const 1)))
                (br $seek)))
            (local.set $closed (local.get $at))
            (local.set $i (i32.add (local.get $at) (i32.const 1)))
            (br $next)))
        (local.set $vs (local.get $fieldStart))
        (local.set $ve (local.get $i))
        (if (i32.and (i32.eq (local.get $byte) (i32.const 10)) (local.get $crlf))
          (then
            (if (i32.ne (i32.load8_u (i32.sub (local.get $i) (i32.const 1))) (i32.const 13)) (then (return (i32.const -3))))
            (local.set $ve (i32.sub (local.get $ve) (i32.const 1)))))
        (if (i32.ge_s (local.get $closed) (i32.const 0))
          (then
            (if (i32.ne (local.get $ve) (i32.add (local.get $closed) (i32.const 1))) (then (return (i32.const -4))))
            (local.set $vs (i32.add (local.get $vs) (i32.const 1)))
            (local.set $ve (i32.sub (local.get $ve) (i32.const 1)))))
        (if (i32.ge_u (local.get $column) (local.get $width)) (then (return (i32.const -5))))
        (if (i32.load8_u (i32.add (local.get $keys) (local.get $column)))
          (then
            (if (i32.or (i32.eq (local.get $ve) (local.get $vs))
                  (i32.or (i32.le_u (i32.load8_u (local.get $vs)) (i32.const 32))
                          (i32.le_u (i32.load8_u (i32.sub (local.get $ve) (i32.const 1))) (i32.const 32))))
              (then (return (i32.const -6))))
            (local.set $j (local.get $vs))
            ;; The mixing of keyHashes in old-rows.ts: FNV-1a and a multiply-shift, 0x1ff after each part.
            (block $hashed
              (loop $hash
                (br_if $hashed (i32.ge_u (local.get $j) (local.get $ve)))
                (local.set $c (i32.load8_u (local.get $j)))
                (if (i32.and (i32.eq (local.get $c) (i32.const 34)) (i32.ge_s (local.get $closed) (i32.const 0)))
                  (then (return (i32.const -7))))
                (local.set $h1 (i32.mul (i32.xor (local.get $h1) (local.get $c)) (i32.const 0x01000193)))
                (local.set $h2 (i32.xor (i32.mul (i32.xor (local.get $h2) (local.get $c)) (i32.const 0x5bd1e995))
                                        (i32.shr_u (local.get $h2) (i32.const 15))))
                (local.set $j (i32.add (local.get $j) (i32.const 1)))
                (br $hash)))
            (local.set $h1 (i32.mul (i32.xor (local.get $h1) (i32.const 0x1ff)) (i32.const 0x01000193)))
            (local.set $h2 (i32.xor (i32.mul (i32.xor (local.get $h2) (i32.const 0x1ff)) (i32.const 0x5bd1e995))
                                    (i32.shr_u (local.get $h2) (i32.const 15)))))
          (else
            (if (i32.gt_u (local.get $ve) (local.get $vs))
              (then
                ;; The value's fits, a sum of fit flags or unsure; written out here, where it runs for
                ;; every value, rather than called.
                (local.set $fit
                  (block $fitted (result i32)
                    (local.set $ds (local.get $vs))
                    (local.set $ch (i32.load8_u (local.get $ds)))
                    (if (i32.eq (local.get $ch) (i32.const 45))
                      (then
                        (local.set $ds (i32.add (local.get $ds) (i32.const 1)))
                        (if (i32.eq (local.get $ds) (local.get $ve)) (then (br $fitted (i32.const 0))))
                        (local.set $ch (i32.load8_u (local.get $ds)))))
                    (if (i32.gt_u (i32.sub (local.get $ch) (i32.const 48)) (i32.const 9))
                      (then
                        (local.set $k (i32.sub (local.get $ve) (local.get $vs)))
                        (if (i32.and
                              (i32.or (i32.eq (local.get $k) (i32.const 4)) (i32.eq (local.get $k) (i32.const 5)))
                              (i32.or (i32.eq (i32.or (local.get $ch) (i32.const 32)) (i32.const 116))
                                      (i32.eq (i32.or (local.get $ch) (i32.const 32)) (i32.const 102))))
                          (then (br $fitted (call $boolean (local.get $vs) (local.get $ve)))))
                        (br $fitted (i32.const 0))))
                    ;; A number or a date: digits first.
                    (local.set $k (local.get $ds))
                    (block $whole_end
              (loop $whole
                (br_if $whole_end (i32.ge_u (local.get $k) (local.get $ve)))
                (br_if $whole_end (i32.gt_u (i32.sub (i32.load8_u (local.get $k)) (i32.const 48)) (i32.const 9)))
                (local.set $k (i32.add (local.get $k) (i32.const 1)))
                (br $whole)))
                    (local.set $digits (i32.sub (local.get $k) (local.get $ds)))
                    ;; "007" is a code, not a number.
                    (local.set $lead (i32.and (i32.gt_u (local.get $digits) (i32.const 1)) (i32.eq (local.get $ch) (i32.const 48))))
                    (if (i32.eq (local.get $k) (local.get $ve))
                      (then
                        (if (local.get $lead) (then (br $fitted (i32.const 0))))
                        ;; Past 300 digits (or an exponent past 250, or 40 digits with one), DOUBLE's range is near.
                        (if (i32.gt_u (local.get $digits) (i32.const 300)) (then (br $fitted (i32.const 16))))
                        (br $fitted (select (i32.const 3) (i32.const 2) (i32.le_u (local.get $digits) (i32.const 18))))))
                    (local.set $b (i32.load8_u (local.get $k)))
                    (if (i32.eq (local.get $b) (i32.const 45))
                      (then
                        (if (i32.and (i32.eq (local.get $ds) (local.get $vs)) (i32.eq (local.get $digits) (i32.const 4)))
                          (then (br $fitted (call $date (local.get $vs) (local.get $ve)))))
                        (br $fitted (i32.const 0))))
                    (if (local.get $lead) (then (br $fitted (i32.const 0))))
                    (local.set $all (local.get $digits))
                    (if (i32.eq (local.get $b) (i32.const 46))
                      (then
                        (local.set $k (i32.add (local.get $k) (i32.const 1)))
                        (local.set $f (local.get $k))
                        (block $fraction_end
              (loop $fraction
                (br_if $fraction_end (i32.ge_u (local.get $k) (local.get $ve)))
                (br_if $fraction_end (i32.gt_u (i32.sub (i32.load8_u (local.get $k)) (i32.const 48)) (i32.const 9)))
                (local.set $k (i32.add (local.get $k) (i32.const 1)))
                (br $fraction)))
                        (if (i32.eq (local.get $k) (local.get $f)) (then (br $fitted (i32.const 0))))
                        (local.set $all (i32.add (local.get $all) (i32.sub (local.get $k) (local.get $f))))))
                    (if (i32.lt_u (local.get $k) (local.get $ve))
                      (then
                        (if (i32.eq (i32.or (i32.load8_u (local.get $k)) (i32.const 32)) (i32.const 101))
                          (then
                            (local.set $k (i32.add (local.get $k) (i32.const 1)))
                            (if (i32.lt_u (local.get $k) (local.get $ve))
                              (then
                                (local.set $b (i32.load8_u (local.get $k)))
                                (if (i32.or (i32.eq (local.get $b) (i32.const 43)) (i32.eq (local.get $b) (i32.const 45)))
                                  (then (local.set $k (i32.add (local.get $k) (i32.const 1)))))))
                            (local.set $f (local.get $k))
                            (block $exponent_end
              (loop $exponent
                (br_if $exponent_end (i32.ge_u (local.get $k) (local.get $ve)))
                (br_if $exponent_end (i32.gt_u (i32.sub (i32.load8_u (local.get $k)) (i32.const 48)) (i32.const 9)))
                (local.set $k (i32.add (local.get $k) (i32.const 1)))
                (br $exponent)))
                            (if (i32.or (i32.eq (local.get $k) (local.get $f)) (i32.ne (local.get $k) (local.get $ve)))
                              (then (br $fitted (i32.const 0))))
                            ;; Leading zeros aside, a short exponent cannot take a double out of range.
                            (local.set $value (i32.const 0))
                            (block $read
                              (loop $digit
                                (br_if $read (i32.ge_u (local.get $f) (local.get $ve)))
                                (br_if $read (i32.gt_u (local.get $value) (i32.const 250)))
                                (local.set $value (i32.add (i32.mul (local.get $value) (i32.const 10))
                                  (i32.sub (i32.load8_u (local.get $f)) (i32.const 48))))
                                (local.set $f (i32.add (local.get $f) (i32.const 1)))
                                (br $digit)))
                            (if (i32.or (i32.gt_u (local.get $value) (i32.const 250)) (i32.gt_u (local.get $all) (i32.const 40)))
                              (then (br $fitted (i32.const 16))))))))
                    (if (i32.ne (local.get $k) (local.get $ve)) (then (br $fitted (i32.const 0))))
                    (select (i32.const 16) (i32.const 2) (i32.gt_u (local.get $all) (i32.const 300)))))
                (local.set $at (i32.add (local.get $counts)
                  (i32.shl (i32.add (i32.shl (local.get $column) (i32.const 5)) (local.get $fit)) (i32.const 2))))
                (i32.store (local.get $at) (i32.add (i32.load (local.get $at)) (i32.const 1))))
              (else
                (if (i32.ge_s (local.get $closed) (i32.const 0))
                  (then
                    (local.set $at (i32.add (local.get $counts) (i32.shl (local.get $column) (i32.const 7))))
                    (i32.store (local.get $at) (i32.add (i32.load (local.get $at)) (i32.const 1)))))))))
        (local.set $closed (i32.const -1))
        (local.set $column (i32.add (local.get $column) (i32.const 1)))
        (local.set $fieldStart (i32.add (local.get $i) (i32.const 1)))
        (if (i32.eq (local.get $byte) (i32.const 10))
          (then
            (if (i32.ne (local.get $column) (local.get $width)) (then (return (i32.const -5))))
            (i32.store (i32.add (local.get $first) (i32.shl (local.get $rows) (i32.const 2))) (call $finish (local.get $h1)))
            (i32.store (i32.add (local.get $second) (i32.shl (local.get $rows) (i32.const 2))) (local.get $h2))
            (local.set $rows (i32.add (local.get $rows) (i32.const 1)))
            (local.set $column (i32.const 0))
            (local.set $h1 (i32.const 0x811c9dc5))
            (local.set $h2 (i32.const 0x9e3779b9))))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br_if $next (i32.lt_u (local.get $i) (local.get $end)))))
    (local.get $rows))
)
