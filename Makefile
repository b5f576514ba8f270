# Boxwright: `make run` builds and opens the demo project, `make test` runs
# the whole test suite. Both install the Debian packages they need first.

GO       ?= go
BIN      := bin/boxwright
DEMO_DIR ?= build/demo
# Debian packages for cgo (SQLite, OpenGL/GLFW window, libjpeg-turbo's JPEG decoder;
# `-tags noturbojpeg` builds without it) and for the window
# smoke test under a virtual X server; shapely is the reference for the IoU check,
# scikit-learn, statsmodels and SciPy for the agreement statistics and matching,
# OpenCV for non-maximum suppression, PyTorch for the detector's layer checks,
# OpenBLAS for the detector's optional `-tags openblas` GEMM, ONNX (python3-onnx)
# to build the test detectors that ONNX Runtime runs, djpeg (libjpeg-turbo-progs)
# as the reference of the scaled JPEG decode.
BUILD_DEBS := gcc pkg-config libgl1-mesa-dev libx11-dev libxcursor-dev libxrandr-dev \
              libxinerama-dev libxi-dev libxxf86vm-dev libturbojpeg0-dev
TEST_DEBS := xvfb xauth xdotool imagemagick sqlite3 python3-shapely python3-sklearn python3-statsmodels python3-scipy python3-opencv python3-torch python3-onnx libjpeg-turbo-progs \
             libopenblas-dev postgresql

export CGO_ENABLED := 1

# ONNX Runtime's shared library, loaded at run time by `detect --model
# FILE.onnx` (the program builds and runs without it): the Linux x64 build
# inside the npm package onnxruntime-node. The binding
# (github.com/yalue/onnxruntime_go v1.26.0) asks for C API version 24,
# which ONNX Runtime 1.24 and later serve.
ORT_VERSION := 1.30.0
ORT_SHA256  := ffb75a925ba05e47b235bb66e3e3911714a80b328a9c9425539feb204aa32a23
ORT_DIR     := build/onnxruntime
ORT_LIB     := $(ORT_DIR)/libonnxruntime.so.1
export BOXWRIGHT_ONNXRUNTIME ?= $(CURDIR)/$(ORT_LIB)

.PHONY: run test deps test-deps onnxruntime build vet unit fuzz smoke killtest loadtest bench bench-go clean

run: deps build
	./$(BIN) demo $(DEMO_DIR)

test: deps test-deps onnxruntime vet unit fuzz smoke

build:
	$(GO) build -o $(BIN) ./app

vet:
	@test -z "$$(gofmt -l $$(git ls-files '*.go' 2>/dev/null || find . -name '*.go'))" || { echo "gofmt would change:"; gofmt -l .; exit 1; }
	$(GO) vet ./...
	$(GO) vet -tags openblas ./suggest/detector/nn/...
	$(GO) vet -tags noturbojpeg ./store/imagefile/...

unit:
	$(GO) test ./...
	$(GO) test -tags openblas ./suggest/detector/nn/...

# A short run of every fuzz target (they also run their seed corpora in
# `unit`); set FUZZTIME=2m for a longer hunt.
# A count rather than a duration: a timed run can end with a spurious
# "context deadline exceeded" on a busy machine.
FUZZTIME ?= 40000x
fuzz:
	@mkdir -p build
	@for pkg in ./project/formats ./project/agree ./store/imagefile ./suggest/detector/nn; do \
	  for f in $$(grep -ho '^func Fuzz[A-Za-z0-9_]*' $$pkg/*_test.go | sed 's/^func //'); do \
	    echo "fuzz $$pkg $$f"; \
	    $(GO) test $$pkg -run '^$$' -fuzz "^$$f$$" -fuzztime $(FUZZTIME) > build/fuzz.log 2>&1 || { cat build/fuzz.log; exit 1; }; \
	  done; \
	done

smoke: build
	.ci/smoke.sh $(BIN)

# Kill test of the window (not part of `make test`: about 15 minutes):
# KILLTEST_RUNS runs per mode, each killed with SIGKILL at a random moment;
# KILLTEST_SEED replays a sequence. See .ci/killtest.sh.
KILLTEST_RUNS ?= 50
KILLTEST_SEED ?=
killtest: build
	@.ci/debs.sh xvfb xdotool sqlite3
	.ci/killtest.sh $(BIN) $(KILLTEST_RUNS) $(KILLTEST_SEED)

# Load test of server projects at the issue's size (not part of `make test`:
# about 2 minutes): 60 s of 20 members editing across a server restart, and
# readers during a 200,000-box import.
loadtest: test-deps
	BOXWRIGHT_LOAD_SECONDS=60 $(GO) test ./store/postgres -run 'TeamLoad|ReadersDuringBigImport' -v -count=1

# The performance table: each benchmark and its reference tool (from
# Debian, installed by test-deps) run alternately, BENCH_ROUNDS rounds each
# side, in one invocation; medians, ratios and goals in one table
# (app/internal/benchtable). BENCH_ONLY=text runs the rows naming it.
BENCH_ROUNDS ?= 5
BENCH_ONLY   ?=
bench: deps test-deps onnxruntime
	$(GO) run ./app/internal/benchtable -rounds $(BENCH_ROUNDS) -only '$(BENCH_ONLY)'

# Every other benchmark of the store, the demo and a model run, as go test prints them.
bench-go: onnxruntime
	$(GO) test -run '^$$' -bench . -benchtime 5x ./store/... ./assets/...
	$(GO) test -run '^$$' -bench ModelOnDemo -benchtime 20x -count 3 ./app/ops/

deps:
	@.ci/debs.sh $(BUILD_DEBS)

test-deps:
	@.ci/debs.sh $(TEST_DEBS)

onnxruntime: $(ORT_LIB)

$(ORT_LIB):
	@.ci/fetch-onnxruntime.sh $(ORT_VERSION) $(ORT_DIR) $(ORT_SHA256)

clean:
	rm -rf bin build
