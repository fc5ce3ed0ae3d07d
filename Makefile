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

# Kernel, encoder and meter benchmarks, then a whole render of the
# benchmark patch with one and two jobs: wall time and peak RSS.
bench: build
	$(GO) test -run '^$$' -bench . -benchmem ./synth/...
	@for j in 1 2; do \
		echo "== sinter render testdata/bench-pad.yaml --jobs $$j"; \
		if [ -x /usr/bin/time ]; then \
			/usr/bin/time -f "%e s wall, %M KiB peak RSS" ./bin/sinter render testdata/bench-pad.yaml -o out/bench-pad --jobs $$j --quiet; \
		else \
			bash -c "time ./bin/sinter render testdata/bench-pad.yaml -o out/bench-pad --jobs $$j --quiet"; \
		fi; \
	done

install:
	$(FAST) $(GO) install ./cmd/sinter

clean:
	rm -rf bin out
