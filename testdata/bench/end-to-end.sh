#!/usr/bin/env bash
# End-to-end figures for `make bench`, each with the target it is held to:
# sinter against the numpy peer on testdata/bench-pad.yaml and on
# testdata/bench/dense-pad.yaml (each run three times, the median kept,
# sinter with its default --jobs), sinter with --jobs 1 and --jobs 2 on the
# bench pad, and the dense set with --jobs 1 and --jobs 2, with peak memory.
# The second core is held to its target on the dense set: the bench pad
# renders in a quarter of a second, of which start-up and syncing the files
# to disk, which a second core does not shorten, are a good part.
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

# verdict A OP B: "target met" or "BELOW TARGET" for a comparison bc can read.
verdict() {
	if [ "$(echo "$1" | bc -l)" = 1 ]; then echo "target met"; else echo "BELOW TARGET"; fi
}

py=/usr/bin/python3
if ! { [ -x "$py" ] && "$py" -c 'import numpy' 2>/dev/null; }; then
	# The peer needs Debian's numpy; install it where this machine can.
	if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null; then
		apt-get update -qq && apt-get install -y -qq python3-numpy >/dev/null || true
	fi
fi
have_numpy=no
if [ -x "$py" ] && "$py" -c 'import numpy' 2>/dev/null; then
	have_numpy=yes
	echo "numpy peer: numpy $("$py" -c 'import numpy; print(numpy.__version__)') on $("$py" --version 2>&1), one core"
else
	echo "numpy peer skipped: $py has no numpy (Debian: apt-get install python3-numpy)"
fi

# peer NAME PATCH: sinter (default --jobs) against the numpy peer.
peer() {
	local name=$1 patch=$2
	"$sinter" check "$patch" | sed -n '2,6p'
	read -r s m < <(median3 "$out/$name" "$sinter" render "$patch" -o "$out/$name" --quiet)
	echo "sinter render $name: $s s, peak RSS $m KiB"
	if [ "$have_numpy" = yes ]; then
		read -r sn mn < <(median3 "$out/numpy-$name" env OPENBLAS_NUM_THREADS=1 "$py" testdata/bench/numpy-peer.py "$name" "$out/numpy-$name")
		echo "numpy peer $name: $sn s, peak RSS $mn KiB"
		echo "sinter is $(echo "scale=1; $sn / $s" | bc)x the numpy peer on $name (target 20x: $(verdict "$sn / $s >= 20"))"
	fi
}

pad=testdata/bench-pad.yaml
read -r s1 m1 < <(median3 "$out/bench-pad" "$sinter" render "$pad" -o "$out/bench-pad" --jobs 1 --quiet)
read -r s2 m2 < <(median3 "$out/bench-pad" "$sinter" render "$pad" -o "$out/bench-pad" --jobs 2 --quiet)
echo "sinter render bench-pad --jobs 1: $s1 s, peak RSS $m1 KiB"
echo "sinter render bench-pad --jobs 2: $s2 s, peak RSS $m2 KiB"
echo "--jobs 2 is $(echo "scale=2; $s1 / $s2" | bc)x --jobs 1 on the bench pad (the target is held on the dense set below)"
peer bench-pad "$pad"
peer dense-pad testdata/bench/dense-pad.yaml

dense=testdata/bench/dense-set.yaml
"$sinter" check "$dense" | sed -n '2,6p'
rm -rf "$out/dense-set"
read -r sd1 md1 < <(measure "$sinter" render "$dense" -o "$out/dense-set" --jobs 1 --quiet)
rm -rf "$out/dense-set"
read -r sd md < <(measure "$sinter" render "$dense" -o "$out/dense-set" --jobs 2 --quiet)
echo "sinter render dense set --jobs 1: $sd1 s, peak RSS $md1 KiB"
echo "sinter render dense set --jobs 2: $sd s, peak RSS $md KiB (target under 262144 KiB: $(verdict "$md < 262144"))"
echo "--jobs 2 is $(echo "scale=2; $sd1 / $sd" | bc)x --jobs 1 on the dense set (target 1.8x: $(verdict "$sd1 / $sd >= 1.8"))"
rm -rf "$out/dense-set" "$out/bench-pad" "$out/dense-pad" "$out/numpy-bench-pad" "$out/numpy-dense-pad" "$out/time.txt"
