# Patina: the two commands a newcomer needs are `make demo` and `make test`.
GO       ?= go
BUILD    := build
BIN      := $(BUILD)/patina
REV      := $(shell git rev-parse --short=12 HEAD 2>/dev/null)
LDFLAGS  := -X main.revision=$(REV)
DEMO_DIR := $(BUILD)/demo

.PHONY: all deps build build-nogui demo test vet fmt-check bench bench-rays fuzz gui-shot clean

all: build

deps:
	@.ci/deps.sh

build: deps
	$(GO) build -buildvcs=auto -ldflags "$(LDFLAGS)" -o $(BIN) ./cmd/patina

build-nogui:
	CGO_ENABLED=0 $(GO) build -tags nogui -buildvcs=auto -ldflags "$(LDFLAGS)" -o $(BUILD)/patina-nogui ./cmd/patina

# The main job on the built-in scenario.
demo: build
	@.ci/demo.sh $(BIN) $(DEMO_DIR)

test: deps vet fmt-check
	$(GO) test -timeout 20m ./...
	@# The BVH's vector loops (GOEXPERIMENT=simd build; the tests there also rerun the scalar ones).
	GOEXPERIMENT=simd $(GO) test -timeout 10m -run 'BVH|Watertight|HitAgainst|Degenerate|LevelCollapse|BuildDeterministic|OtherLoops|Cast|Embree|NewScene|NextUp|Generated' ./render/
	@if [ "$${CI:-}" = "true" ] || command -v Xvfb >/dev/null 2>&1; then $(MAKE) --no-print-directory gui-shot; \
	else echo "gui-shot: Xvfb not installed, workbench screenshots skipped (make deps installs it)"; fi

# Screenshots of the real workbench under Xvfb (build/gui-shots/); fails when
# the window does not appear or a screenshot is blank.
gui-shot: build
	@.ci/gui-shot.sh $(BIN)

vet:
	$(GO) vet ./...
	GOEXPERIMENT=simd $(GO) vet ./render/

fmt-check:
	@out=$$(gofmt -l $$(git ls-files '*.go' 2>/dev/null || find . -name '*.go')); \
	if [ -n "$$out" ]; then echo "gofmt would change:"; echo "$$out"; exit 1; fi

# Benchmarks: figures are goals, quoted as medians; compare runs with benchstat.
bench: deps
	$(GO) test -run '^$$' -bench . -benchmem -count 5 ./... | tee $(BUILD)/bench.txt

# Ray throughput side by side with Embree 3 (needs libembree-dev): the
# default scalar build and the GOEXPERIMENT=simd vector build, interleaved,
# on the same 1M-triangle mesh and ray files (../shared/bench/embree/).
EMBREE_BENCH ?= ../shared/bench/embree
RAYS_DIR     ?= /tmp/patina-raybench
bench-rays:
	CGO_ENABLED=0 $(GO) build -tags nogui -o $(BUILD)/patina-scalar ./cmd/patina
	CGO_ENABLED=0 GOEXPERIMENT=simd $(GO) build -tags nogui -o $(BUILD)/patina-vector ./cmd/patina
	@for i in 1 2 3; do \
	  echo "== scalar, round $$i"; sh $(EMBREE_BENCH)/compare.sh $(BUILD)/patina-scalar $(RAYS_DIR); \
	  echo "== vector, round $$i"; sh $(EMBREE_BENCH)/compare.sh $(BUILD)/patina-vector $(RAYS_DIR); \
	done

# Fuzz every target for FUZZTIME each (default 60s).
FUZZTIME ?= 60s
fuzz:
	@.ci/fuzz.sh $(FUZZTIME)

clean:
	rm -rf $(BUILD)
