# gapbook: build, test and benchmark.
GO       ?= go
WASMPATH := $(shell $(GO) env GOROOT)/lib/wasm
# Numerical packages: tested natively and compiled to WebAssembly under node.
NUMERIC  := $(foreach d,expr convex problem mesh fem nonlinear estimate meshfile,$(if $(wildcard $(d)/*.go),./$(d)/...))
# Raw benchmark outputs for the nonlinear table.
BENCHOUT := $(or $(TMPDIR),/tmp)

.PHONY: run wasm build test test-native test-wasm vet bench fuzz

# The page's engine: Go compiled to WebAssembly, with the runtime support
# script of the same Go. Both are git-ignored and embedded by `build`.
wasm:
	GOOS=js GOARCH=wasm $(GO) build -trimpath -ldflags='-s -w' -o web/static/gapbook.wasm ./wasm
	cp "$(WASMPATH)/wasm_exec.js" web/static/wasm_exec.js

build: wasm
	$(GO) build -trimpath -o bin/gapbook ./cmd/gapbook

# Serve the default study in the browser (ADDR=127.0.0.1:PORT to change).
ADDR ?= 127.0.0.1:8787
run: build
	bin/gapbook serve --addr $(ADDR) examples/default.gapbook

test: vet test-native test-wasm

vet:
	$(GO) vet ./...
	@test -z "$$(gofmt -l $$(git ls-files '*.go'))" || { echo "gofmt needed:"; gofmt -l $$(git ls-files '*.go'); exit 1; }

test-native:
	$(GO) test -count=1 ./...

test-wasm:
	PATH="$$PATH:$(WASMPATH)" GOOS=js GOARCH=wasm $(GO) test -count=1 $(NUMERIC)

bench:
	$(GO) test -run '^$$' -bench . -benchmem $(filter-out ./nonlinear/...,$(NUMERIC))
	$(GO) test -run '^$$' -bench 'SweepWorkers|MalformedCorpus' -benchtime 1x ./notebook/kinds/
	$(GO) test -run '^$$' -bench 'PageSweepWorkers|FirstResults' -benchtime 1x ./web/
	$(GO) test -run '^$$' -bench SolverSuite -benchtime 1x -timeout 60m ./nonlinear/
	$(GO) test -run '^$$' -bench EllipticSolve -timeout 60m ./nonlinear/ | tee $(BENCHOUT)/gapbook-bench-native.txt
	PATH="$$PATH:$(WASMPATH)" GOOS=js GOARCH=wasm $(GO) test -run '^$$' -bench EllipticSolve -timeout 60m ./nonlinear/ | tee $(BENCHOUT)/gapbook-bench-wasm.txt
	$(GO) run ./nonlinear/benchtable $(BENCHOUT)/gapbook-bench-native.txt $(BENCHOUT)/gapbook-bench-wasm.txt

# Long fuzzing runs; make test only replays the seed corpus.
fuzz:
	$(GO) test ./expr -run '^$$' -fuzz FuzzParseEval -fuzztime 60s
	$(GO) test ./notebook -run '^$$' -fuzz FuzzLoad -fuzztime 60s
	$(GO) test ./notebook/texmath -run '^$$' -fuzz . -fuzztime 60s
	$(GO) test ./meshfile -run '^$$' -fuzz FuzzRead -fuzztime 60s
