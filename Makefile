# sinter: the two everyday commands are `make demo` and `make test`.
GO ?= go
SHELL := /bin/bash
.SHELLFLAGS := -o pipefail -c
EXAMPLES := $(wildcard examples/*.yaml)

.PHONY: all build demo test tools asm-check fuzz bench install clean

all: build

# One build for every processor: the kernels for AVX-512, AVX2 and plain
# Go are all in it, and the widest the processor runs is chosen at start.
build:
	$(GO) build -o bin/sinter ./cmd/sinter

# Render every example patch into out/<name>.
demo: build
	@for p in $(EXAMPLES); do \
		n=$$(basename $$p .yaml); \
		echo "== $$p"; \
		./bin/sinter render $$p -o out/$$n || exit 1; \
		./bin/sinter verify out/$$n || exit 1; \
	done
	./bin/sinter analyze examples/recordings/dulcimer-d4.wav -o out/dulcimer-d4.yaml --plot out/dulcimer-d4.png

# Every test, the committed assembly checked against its generator, then a
# short bounded run of each fuzz target. The review page's tests run in
# Chromium, which tools installs; SINTER_BROWSER=required makes them fail
# rather than skip without it.
test: tools asm-check
	$(GO) vet ./...
	SINTER_BROWSER=required $(GO) test ./...
	@$(MAKE) --no-print-directory fuzz FUZZTIME=3s

# The kernel package's encoding test reads the kernels with GNU objdump
# (binutils), which Go's own disassembler cannot replace: it does not
# decode AVX-512. Installed from the distribution where it is missing.
#
# The review page's tests drive Debian's chromium (headless) through
# chromedp, so they need the browser itself; also installed where it is
# missing.
tools:
	@command -v objdump >/dev/null || { apt-get update -qq && apt-get install -y -qq binutils >/dev/null; }
	@command -v chromium >/dev/null || { apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null; }

# Regenerate the kernels' assembly into a temporary folder with its avo
# generator (synth/kernel/asm) and fail if it differs from what is
# committed.
asm-check:
	@set -e; tmp=$$(mktemp -d); trap 'rm -rf $$tmp' EXIT; \
	(cd synth/kernel/asm && $(GO) run . -dir $$tmp all); \
	for f in $$tmp/*; do \
		cmp -s $$f synth/kernel/$$(basename $$f) || { echo "synth/kernel/$$(basename $$f) differs from its generator's output: run go generate ./synth/kernel"; exit 1; }; \
	done; echo "assembly matches its generator"

FUZZTIME ?= 60s
fuzz:
	@set -e; for pkg in $$($(GO) list ./...); do \
		for f in $$($(GO) test -list 'Fuzz.*' $$pkg | grep '^Fuzz' || true); do \
			echo "fuzz $$pkg $$f ($(FUZZTIME))"; \
			$(GO) test -run '^$$' -fuzz "^$$f$$" -fuzztime $(FUZZTIME) $$pkg > /tmp/sinter-fuzz.log 2>&1 || { cat /tmp/sinter-fuzz.log; exit 1; }; \
		done; \
	done

# In one run: the processor and the kernel chosen; the kernels (naive
# reference and every set the processor runs), the encoder and meters;
# then whole renders beside the numpy peer, with wall time and peak memory.
bench: build
	./testdata/bench/processor.sh ./bin/sinter
	$(GO) test -run '^$$' -bench . -benchmem ./synth/... | ./testdata/bench/kernel-targets.sh ./bin/sinter
	./testdata/bench/end-to-end.sh ./bin/sinter out/bench

# The same build `go install ./cmd/sinter` makes.
install:
	$(GO) install ./cmd/sinter

clean:
	rm -rf bin out
