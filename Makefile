# sinter: the two everyday commands are `make demo` and `make test`.
GO ?= go
EXAMPLES := $(wildcard examples/*.yaml)

# The vector kernels need Go's SIMD experiment (Go 1.26 and later, amd64).
# Where the toolchain has it, sinter is built with it; the plain build is
# what `go install` makes, and `make test` tests both.
SIMD := $(shell GOEXPERIMENT=simd $(GO) list simd/archsimd >/dev/null 2>&1 && echo yes)
FAST := $(if $(SIMD),GOEXPERIMENT=simd)

.PHONY: all build demo test fuzz bench install clean

all: build

build:
	$(FAST) $(GO) build -o bin/sinter ./cmd/sinter

# Render every example patch into out/<name>.
demo: build
	@for p in $(EXAMPLES); do \
		n=$$(basename $$p .yaml); \
		echo "== $$p"; \
		./bin/sinter render $$p -o out/$$n || exit 1; \
		./bin/sinter verify out/$$n || exit 1; \
	done

# Every test in the plain build and, where the toolchain has it, the SIMD
# build; then a short bounded run of each fuzz target.
test:
	$(GO) vet ./...
	$(GO) test ./...
ifneq ($(SIMD),)
	GOEXPERIMENT=simd $(GO) vet ./...
	GOEXPERIMENT=simd $(GO) test ./...
endif
	@$(MAKE) --no-print-directory fuzz FUZZTIME=3s

FUZZTIME ?= 60s
fuzz:
	@set -e; for pkg in $$($(GO) list ./...); do \
		for f in $$($(GO) test -list 'Fuzz.*' $$pkg | grep '^Fuzz' || true); do \
			echo "fuzz $$pkg $$f ($(FUZZTIME))"; \
			$(GO) test -run '^$$' -fuzz "^$$f$$" -fuzztime $(FUZZTIME) $$pkg > /tmp/sinter-fuzz.log 2>&1 || { cat /tmp/sinter-fuzz.log; exit 1; }; \
		done; \
	done

# In one run: the oscillator kernels (naive reference, plain, and the
# vector kernel where the build has it), the encoder and meters; then whole
# renders of testdata/bench-pad.yaml with --jobs 1 and 2 beside the numpy
# peer, and the dense set, with wall time and peak memory.
bench: build
	$(FAST) $(GO) test -run '^$$' -bench . -benchmem ./synth/...
	./testdata/bench/end-to-end.sh ./bin/sinter out/bench

install:
	$(FAST) $(GO) install ./cmd/sinter

clean:
	rm -rf bin out
