#!/bin/sh
# Before/after side by side in one run (used for /work/notes/siting.md): the code before is a
# `git archive 0dc89c8` unpacked at /tmp/siting-before (node_modules symlinked, server/db/generated copied, this
# bench file copied in); both trees run `npm run bench -- siting` alternately. Usage: SITING_BENCH_NODES=2000 sh test/bench/_siting-side-by-side.sh 1
rounds=${1:-1}
for r in $(seq 1 $rounds); do
  for v in before after; do
    dir=/tmp/siting-before; [ $v = after ] && dir=$(pwd)
    echo "=== $v (round $r) $(uptime)"
    (cd $dir && SITING_BENCH_DUMP=/tmp/siting-prof/m-$v npx tsx test/bench/run.ts siting 2>&1 | grep -E "^matrix|nodes ×|^k=|budget|after")
  done
done
