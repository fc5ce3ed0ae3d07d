#!/usr/bin/env bash
# Passes `go test -bench` output through and adds, for the kernel sinter
# chose on this processor, the oscillator targets `make bench` holds it
# to: still partials at 3 G partial-samples/s or more per core, moving
# ones at 1 G or more.
# usage: go test -bench . ./synth/... | kernel-targets.sh SINTER_BINARY
set -euo pipefail
kernel=$("$1" --version | sed -n 's/.*(\([a-z0-9]*\) kernel.*/\1/p')
awk -v k="$kernel" '
	{ print }
	function check(name, target, label) {
		if (!(name in rate)) { printf "%s: no figure for the %s kernel\n", label, k; return }
		printf "%s, %s kernel: %.2f G partial-samples/s (target %g G: %s)\n", label, k, rate[name] / 1e9, target / 1e9, (rate[name] >= target ? "target met" : "BELOW TARGET")
	}
	/^Benchmark(Render|RenderVibrato)\// {
		for (i = 1; i <= NF; i++) if ($(i + 1) == "partial-samples/s") { split($1, n, "-"); rate[n[1]] = $i }
	}
	END {
		check("BenchmarkRender/" k, 3e9, "still partials")
		check("BenchmarkRenderVibrato/" k, 1e9, "moving partials")
	}'
