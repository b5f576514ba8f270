// Package onnxtest gives tests the test detectors of package suggest/onnx
// (built from scratch by testdata/build_models.py with Debian's
// python3-onnx; nothing is downloaded) and ONNX Runtime's library.
package onnxtest

import (
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"sync"
	"testing"
)

// Python is the interpreter of the reference libraries.
const Python = "/usr/bin/python3"

// RuntimeEnv is suggest/onnx's RuntimeEnv (not imported: that package's
// own tests use this one).
const RuntimeEnv = "BOXWRIGHT_ONNXRUNTIME"

// Model is one entry of models.json (see build_models.py).
type Model struct {
	File    string   `json:"file"`
	Layout  string   `json:"layout"`
	Width   any      `json:"width"`
	Height  any      `json:"height"`
	Classes int      `json:"num_classes"`
	Names   []string `json:"names"`
	Outputs []struct {
		Name string `json:"name"`
	} `json:"outputs"`
}

// Testdata is the folder of build_models.py and reference.py.
func Testdata() string {
	_, file, _, _ := runtime.Caller(0)
	return filepath.Join(filepath.Dir(file), "..", "testdata")
}

// Runtime finds ONNX Runtime's library: $BOXWRIGHT_ONNXRUNTIME (make test
// sets it) or the module's build/onnxruntime/ (make onnxruntime). Without
// it the test is skipped, and fails under CI.
func Runtime(t testing.TB) string {
	t.Helper()
	p := os.Getenv(RuntimeEnv)
	if p == "" {
		p = filepath.Join(Testdata(), "..", "..", "..", "build", "onnxruntime", "libonnxruntime.so.1")
	}
	if _, err := os.Stat(p); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI must fetch ONNX Runtime (make onnxruntime) for this check: %v", err)
		}
		t.Skipf("ONNX Runtime is not fetched (make onnxruntime): %v", err)
	}
	return p
}

// NeedPython skips (fails under CI) when the Python modules are missing.
func NeedPython(t testing.TB, modules string) {
	t.Helper()
	if err := exec.Command(Python, "-c", "import "+modules).Run(); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI must install %s for this check: %v", modules, err)
		}
		t.Skipf("%s not installed", modules)
	}
}

var built struct {
	once sync.Once
	dir  string
	list []Model
	err  error
}

// Models builds the test detectors once per test binary into a temporary
// folder (removed by Cleanup at the end of TestMain) and lists them.
func Models(t testing.TB) (string, []Model) {
	t.Helper()
	NeedPython(t, "onnx, cv2, numpy")
	built.once.Do(func() {
		built.dir, built.err = os.MkdirTemp("", "boxwright-onnx-models-")
		if built.err != nil {
			return
		}
		out, err := exec.Command(Python, filepath.Join(Testdata(), "build_models.py"), built.dir).CombinedOutput()
		if err != nil {
			built.err = fmt.Errorf("build_models.py: %v\n%s", err, out)
			return
		}
		b, err := os.ReadFile(filepath.Join(built.dir, "models.json"))
		if err == nil {
			err = json.Unmarshal(b, &built.list)
		}
		built.err = err
	})
	if built.err != nil {
		t.Fatal(built.err)
	}
	return built.dir, built.list
}

// Cleanup removes the models built; call it from TestMain after m.Run.
func Cleanup() {
	if built.dir != "" {
		os.RemoveAll(built.dir)
	}
}
