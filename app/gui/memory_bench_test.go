package gui

import (
	"bufio"
	"bytes"
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"boxwright/project"
	"boxwright/store"
)

// open12MPEnv names the project a child process of
// BenchmarkOpen12MPPeakRSS opens.
const open12MPEnv = "BOXWRIGHT_BENCH_OPEN12MP"

// BenchmarkOpen12MPPeakRSS reports the peak resident memory of a process
// that opens a project and shows one 12-megapixel JPEG in a 1600×1000
// window (the toolkit's software renderer draws it once), measured in a
// fresh child process so that the benchmark's own set-up does not count:
// MiB-peak-rss for the whole process (the median child; -max the largest,
// which depends on when the collector ran), MiB-before-open for the same process
// just before the project is opened (the toolkit and the program alone).
func BenchmarkOpen12MPPeakRSS(b *testing.B) {
	dir := b.TempDir()
	imgDir := filepath.Join(dir, "images")
	if err := os.MkdirAll(imgDir, 0o755); err != nil {
		b.Fatal(err)
	}
	benchJPEGs(b, imgDir, 1)
	path := filepath.Join(dir, "one"+store.Extension)
	st, err := store.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	rep, err := st.AddImages(context.Background(), []string{imgDir}, project.IntakeOptions{})
	st.Close()
	if err != nil || rep.Added != 1 {
		b.Fatalf("adding the image: %+v, %v", rep, err)
	}
	var peaks []float64
	var before float64
	b.ResetTimer()
	for range b.N {
		cmd := exec.Command(os.Args[0], "-test.run", "^TestOpen12MPChild$", "-test.count", "1")
		cmd.Env = append(os.Environ(), open12MPEnv+"="+path)
		out, err := cmd.CombinedOutput()
		if err != nil {
			b.Fatalf("child: %v\n%s", err, out)
		}
		ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage)
		if !ok {
			b.Skip("no resource usage on this system")
		}
		peaks = append(peaks, float64(ru.Maxrss)/1024) // KiB on Linux
		sc := bufio.NewScanner(bytes.NewReader(out))
		for sc.Scan() {
			if v, ok := strings.CutPrefix(sc.Text(), "before-open-kib "); ok {
				kib, _ := strconv.ParseFloat(v, 64)
				before = max(before, kib/1024)
			}
		}
	}
	slices.Sort(peaks)
	b.ReportMetric(peaks[len(peaks)/2], "MiB-peak-rss")
	b.ReportMetric(peaks[len(peaks)-1], "MiB-peak-rss-max")
	b.ReportMetric(before, "MiB-before-open")
}

// TestOpen12MPChild is BenchmarkOpen12MPPeakRSS's child process; it does
// nothing in a normal test run.
func TestOpen12MPChild(t *testing.T) {
	path := os.Getenv(open12MPEnv)
	if path == "" {
		t.Skip("the child process of BenchmarkOpen12MPPeakRSS")
	}
	u := newUI(test.NewTempApp(t))
	u.annotatorFlag = "bench"
	shown := make(chan error, 4)
	u.decoded = func(_ int64, err error) { shown <- err }
	u.win.Resize(fyne.NewSize(1600, 1000))
	os.Stdout.WriteString("before-open-kib " + strconv.Itoa(highWaterKiB()) + "\n")
	if err := u.openProject(path); err != nil {
		t.Fatal(err)
	}
	defer u.closeProject()
	select {
	case err := <-shown:
		if err != nil {
			t.Fatal(err)
		}
	case <-time.After(60 * time.Second):
		t.Fatal("no image shown within 60 s")
	}
	u.win.Canvas().Capture() // draw the window once, as the screen would
}

// highWaterKiB reads the process's peak resident memory so far (VmHWM).
func highWaterKiB() int {
	data, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return 0
	}
	for _, line := range strings.Split(string(data), "\n") {
		if v, ok := strings.CutPrefix(line, "VmHWM:"); ok {
			n, _ := strconv.Atoi(strings.TrimSuffix(strings.TrimSpace(v), " kB"))
			return n
		}
	}
	return 0
}
