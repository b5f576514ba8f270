package onnx

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"

	ort "github.com/yalue/onnxruntime_go"
)

// RuntimeEnv names the environment variable that points at ONNX Runtime's
// shared library (the --onnxruntime flag comes first).
const RuntimeEnv = "BOXWRIGHT_ONNXRUNTIME"

// RuntimeAPI is the version of ONNX Runtime's C API the binding
// (github.com/yalue/onnxruntime_go v1.26.0, headers of ONNX Runtime
// 1.24.1) asks for: any library of version 1.24 or later serves it.
const RuntimeAPI = 24

// RuntimeLibrary is the library's file name in the build folder.
const RuntimeLibrary = "libonnxruntime.so.1"

// ErrNoRuntime is wrapped by every error that comes from ONNX Runtime's
// library being absent or unusable.
var ErrNoRuntime = errors.New("ONNX Runtime is not available")

// whereToGetIt ends every message about a missing runtime.
const whereToGetIt = "ONNX Runtime is a separate shared library of version 1.24 or later; " +
	"`make onnxruntime` fetches it into build/onnxruntime/ (from the npm package onnxruntime-node 1.30.0, " +
	"bin/napi-v6/linux/x64/" + RuntimeLibrary + "), or point --onnxruntime or " + RuntimeEnv + " at one you have"

var runtime struct {
	sync.Mutex
	path string // the library loaded, once loaded
	err  error
}

// RuntimeCandidates lists where the library is looked for when neither
// the flag nor the environment names it: the build folder beside the
// program (bin/boxwright → build/onnxruntime/), the program's own folder,
// then the system's library path.
func RuntimeCandidates() []string {
	var out []string
	if exe, err := os.Executable(); err == nil {
		dir := filepath.Dir(exe)
		out = append(out, filepath.Join(dir, "..", "build", "onnxruntime", RuntimeLibrary),
			filepath.Join(dir, "build", "onnxruntime", RuntimeLibrary), filepath.Join(dir, RuntimeLibrary))
	}
	if wd, err := os.Getwd(); err == nil {
		out = append(out, filepath.Join(wd, "build", "onnxruntime", RuntimeLibrary))
	}
	return append(out, RuntimeLibrary)
}

// LoadRuntime loads ONNX Runtime's library once per process: from path
// when given, else from $BOXWRIGHT_ONNXRUNTIME, else from the first of
// RuntimeCandidates that exists. A second call with another path is
// refused (a process holds one runtime). Errors wrap ErrNoRuntime and say
// where to get the library.
func LoadRuntime(path string) (string, error) {
	runtime.Lock()
	defer runtime.Unlock()
	if path == "" {
		path = os.Getenv(RuntimeEnv)
	}
	if runtime.path != "" {
		if path != "" && !samePath(path, runtime.path) {
			return runtime.path, fmt.Errorf("ONNX Runtime is loaded from %s already; %s cannot be loaded beside it (restart to use it): %w", runtime.path, path, ErrNoRuntime)
		}
		return runtime.path, nil
	}
	var tried []string
	if path != "" {
		st, err := os.Stat(path)
		if err != nil {
			return "", fmt.Errorf("ONNX Runtime library %s: %v; %s: %w", path, err, whereToGetIt, ErrNoRuntime)
		}
		if !st.Mode().IsRegular() {
			return "", fmt.Errorf("ONNX Runtime library %s is not a regular file; %s: %w", path, whereToGetIt, ErrNoRuntime)
		}
		tried = []string{path}
	} else {
		for _, c := range RuntimeCandidates() {
			if !strings.ContainsRune(c, '/') {
				tried = append(tried, c) // left to the system's search
				break
			}
			if st, err := os.Stat(c); err == nil && st.Mode().IsRegular() {
				tried = append(tried, c)
				break
			}
		}
	}
	p := tried[len(tried)-1]
	ort.SetSharedLibraryPath(p)
	if err := ort.InitializeEnvironment(ort.WithLogLevelError()); err != nil {
		msg := err.Error()
		if strings.Contains(msg, "OrtGetApiBase") || strings.Contains(msg, "API") {
			msg = fmt.Sprintf("%s is not a usable ONNX Runtime library (this program needs C API version %d, ONNX Runtime 1.24 or later): %v", p, RuntimeAPI, err)
		} else {
			msg = fmt.Sprintf("ONNX Runtime library %s could not be loaded: %v", p, err)
		}
		if path == "" {
			msg += fmt.Sprintf(" (looked in %s)", strings.Join(RuntimeCandidates(), ", "))
		}
		return "", fmt.Errorf("%s; %s: %w", msg, whereToGetIt, ErrNoRuntime)
	}
	runtime.path = p
	return p, nil
}

// RuntimeVersion is the loaded library's version ("" before LoadRuntime).
func RuntimeVersion() string {
	runtime.Lock()
	defer runtime.Unlock()
	if runtime.path == "" {
		return ""
	}
	return ort.GetVersion()
}

func samePath(a, b string) bool {
	ra, errA := filepath.EvalSymlinks(a)
	rb, errB := filepath.EvalSymlinks(b)
	if errA == nil && errB == nil {
		return ra == rb
	}
	return filepath.Clean(a) == filepath.Clean(b)
}
