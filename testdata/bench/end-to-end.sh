#!/usr/bin/env bash
# End-to-end figures for `make bench`: sinter against the numpy peer on
# testdata/bench-pad.yaml (each run three times, the median kept), sinter
# with --jobs 1 and --jobs 2, and the dense set once, with peak memory.
# usage: end-to-end.sh SINTER_BINARY OUT_DIR
set -euo pipefail
sinter=$1
out=$2
mkdir -p "$out"

# seconds and peak KiB of one run of a command, as "S KIB".
measure() {
	if [ -x /usr/bin/time ]; then
		/usr/bin/time -f "%e %M" -o "$out/time.txt" "$@" >/dev/null
		cat "$out/time.txt"
	else
		local t0 t1
		t0=$(date +%s.%N)
		"$@" >/dev/null
		t1=$(date +%s.%N)
		echo "$(echo "$t1 - $t0" | bc) 0"
	fi
}

# median of three runs into a fresh folder each time: "S KIB". The first
# argument is that folder, removed before each run so no run pays for
# replacing the last one's set.
median3() {
	local dir=$1
	shift
	for _ in 1 2 3; do rm -rf "$dir"; measure "$@"; done | sort -n | sed -n 2p
}

pad=testdata/bench-pad.yaml
echo "== $("$sinter" --version)"
"$sinter" check "$pad" | sed -n '2,6p'
read -r s1 m1 < <(median3 "$out/bench-pad" "$sinter" render "$pad" -o "$out/bench-pad" --jobs 1 --quiet)
read -r s2 m2 < <(median3 "$out/bench-pad" "$sinter" render "$pad" -o "$out/bench-pad" --jobs 2 --quiet)
echo "sinter render --jobs 1: $s1 s, peak RSS $m1 KiB"
echo "sinter render --jobs 2: $s2 s, peak RSS $m2 KiB  (jobs 2 is $(echo "scale=2; $s1 / $s2" | bc)x jobs 1)"

py=/usr/bin/python3
if [ -x "$py" ] && "$py" -c 'import numpy' 2>/dev/null; then
	read -r sn mn < <(median3 "$out/numpy-peer" env OPENBLAS_NUM_THREADS=1 "$py" testdata/bench/numpy-peer.py "$out/numpy-peer")
	echo "numpy peer (numpy $("$py" -c 'import numpy; print(numpy.__version__)')): $sn s, peak RSS $mn KiB"
	echo "sinter --jobs 2 is $(echo "scale=1; $sn / $s2" | bc)x faster than the numpy peer"
else
	echo "numpy peer skipped: $py has no numpy (Debian: apt-get install python3-numpy)"
fi

dense=testdata/bench/dense-set.yaml
"$sinter" check "$dense" | sed -n '2,6p'
rm -rf "$out/dense-set"
read -r sd md < <(measure "$sinter" render "$dense" -o "$out/dense-set" --quiet)
echo "sinter render dense set: $sd s, peak RSS $md KiB"
rm -rf "$out/dense-set" "$out/numpy-peer" "$out/bench-pad" "$out/time.txt"
