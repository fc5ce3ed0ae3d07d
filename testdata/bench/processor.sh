#!/usr/bin/env bash
# The processor `make bench` runs on and the kernel sinter chose on it, so
# every figure it prints can be read against the machine it came from.
# usage: processor.sh SINTER_BINARY
set -euo pipefail
field() { grep -m1 "^$1[[:space:]]*:" /proc/cpuinfo 2>/dev/null | sed 's/^[^:]*:[[:space:]]*//'; }
echo "== processor: $(field 'vendor_id'), $(field 'model name') (family $(field 'cpu family'), model $(field 'model')), $(nproc) logical CPUs"
flags=" $(field flags) "
have=""
for f in sse4_2 avx avx2 fma avx512f avx512dq avx512bw avx512vl; do
	case "$flags" in *" $f "*) have="$have $f" ;; esac
done
echo "== vector features:${have:- none}"
echo "== $("$1" --version)"
