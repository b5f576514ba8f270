// Command benchtable is `make bench`: it runs each benchmark of the
// performance table and its reference tool alternately, several rounds
// each, in one invocation, and prints one table of medians with their
// ratio and the goal. Benchmarks never assert on time; this table is what
// a closing note quotes.
//
// Our side is a Go benchmark (its test binary built once per package);
// the reference side is a script beside it that prints one "seconds X"
// line per timed run, or another Go benchmark. A benchmark that shares its
// input with the reference writes it into $BENCH_DATA, so ours runs first.
package main

import (
	"bufio"
	"bytes"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"
)

// side is one half of a row: a Go benchmark or a reference command.
type side struct {
	pkg, bench string // Go: package path and Benchmark[/sub] name
	benchtime  string // Go: -test.benchtime, e.g. "3x"
	script     []string
	runs       int // script: timed runs per round (--runs)
	threads    bool
}

// row is one line of the table. Ratio is ours/reference time; goal is
// met when ratio ≤ maxRatio (0: none) and ours ≤ maxSeconds (0: none).
type row struct {
	name       string
	ours, ref  side
	refName    string
	data       string // a folder shared with the rows before it ("" for its own)
	maxRatio   float64
	maxSeconds float64
	goal       string
}

func rows() []row {
	return []row{
		{
			name:     "exact NCC, 4000×3000 gray, 64×64, one scale",
			ours:     side{pkg: "./suggest/exemplar", bench: "BenchmarkNCC12MPOneScale", benchtime: "5x"},
			ref:      side{script: []string{"/usr/bin/python3", "suggest/exemplar/compare_ncc.py", "--mode", "one-scale"}, runs: 3, threads: true},
			refName:  "OpenCV matchTemplate",
			maxRatio: 1.0, goal: "≤ 1.0×",
		},
		{
			name:     "coarse-to-fine search, 5 scales",
			ours:     side{pkg: "./suggest/exemplar", bench: "BenchmarkSearch12MPFiveScales", benchtime: "10x"},
			ref:      side{script: []string{"/usr/bin/python3", "suggest/exemplar/compare_ncc.py", "--mode", "five-scales"}, runs: 2, threads: true},
			refName:  "OpenCV, 5 scales exhaustive",
			maxRatio: 0.1, goal: "≥ 10× faster",
		},
		{
			name:     "import 200,000 boxes (corner/size JSON)",
			ours:     side{pkg: "./app/cli", bench: "BenchmarkImportCommand200k", benchtime: "3x"},
			ref:      side{script: []string{"sh", "store/compare_import.sh"}, runs: 3},
			refName:  "sqlite3 .import, one transaction",
			maxRatio: 1.5, maxSeconds: 0.5, goal: "≤ 1.5×, ≤ 0.5 s, < 200 MB",
		},
		{
			name:       "agree, 10,000 images × 2 × 20 boxes",
			ours:       side{pkg: "./app/cli", bench: "BenchmarkAgreeCommand10000Images2Annotators", benchtime: "5x"},
			maxSeconds: 0.3, goal: "≤ 0.3 s",
		},
		{
			name:     "decode a 12 MP JPEG, full size",
			ours:     side{pkg: "./store/imagefile", bench: "BenchmarkDecode12MP/boxwright-full", benchtime: "10x"},
			ref:      side{script: []string{"/usr/bin/python3", "store/imagefile/compare_djpeg.py", "--scale", "1/1"}, runs: 10},
			refName:  "djpeg",
			maxRatio: 1.2, data: "jpeg12", goal: "≤ 1.2×",
		},
		{
			name:     "decode a 12 MP JPEG at 1/8 (DCT scaling)",
			ours:     side{pkg: "./store/imagefile", bench: "BenchmarkDecode12MP/boxwright-1/8", benchtime: "10x"},
			ref:      side{pkg: "./store/imagefile", bench: "BenchmarkDecode12MP/boxwright-full", benchtime: "10x"},
			refName:  "our full-size decode",
			maxRatio: 0.25, data: "jpeg12", goal: "≥ 4× faster",
		},
		{
			name:    "djpeg at 1/8 against djpeg full (the tool's own floor)",
			ours:    side{script: []string{"/usr/bin/python3", "store/imagefile/compare_djpeg.py", "--scale", "1/8"}, runs: 10},
			ref:     side{script: []string{"/usr/bin/python3", "store/imagefile/compare_djpeg.py", "--scale", "1/1"}, runs: 10},
			refName: "djpeg full",
			data:    "jpeg12",
			goal:    "(context)",
		},
		{
			name:    "image-list thumbnail of a 12 MP JPEG",
			ours:    side{pkg: "./app/gui", bench: "BenchmarkThumbnail12MP/list", benchtime: "10x"},
			ref:     side{pkg: "./app/gui", bench: "BenchmarkThumbnail12MP/full-decode", benchtime: "3x"},
			refName: "full-size decode, then scaled",
			goal:    "(context)",
		},
		{
			name:       "next image, 12 MP, no prefetch",
			ours:       side{pkg: "./app/gui", bench: "BenchmarkNextImage12MP/noprefetch", benchtime: "6x"},
			maxSeconds: 0.15, goal: "≤ 150 ms",
		},
		{
			name: "a 12 MP image open in the window",
			ours: side{pkg: "./app/gui", bench: "BenchmarkOpen12MPPeakRSS", benchtime: "1x"},
			goal: "(memory)",
		},
		{
			name:     "COCO-style AP@[.50:.95], 5,000 images / 200,000 predictions",
			ours:     side{pkg: "./project/eval", bench: "BenchmarkEvaluateCOCO", benchtime: "10x"},
			ref:      side{script: []string{"/usr/bin/python3", "project/eval/testdata/coco_reference.py"}, runs: 1},
			refName:  "reference Python (COCO procedure)",
			maxRatio: 1.0 / 40, goal: "≥ 40× faster",
		},
	}
}

// sample is what one run of a side gave: seconds per operation and any
// extra metrics a Go benchmark reported (unit → value).
type sample struct {
	seconds []float64
	metrics map[string][]float64
}

func main() {
	rounds := flag.Int("rounds", 5, "rounds per row; each runs ours then the reference")
	only := flag.String("only", "", "run only the rows whose name contains this text")
	flag.Parse()
	root, err := os.Getwd()
	if err != nil {
		fail(err)
	}
	work := filepath.Join(root, "build", "bench")
	if err := os.MkdirAll(work, 0o755); err != nil {
		fail(err)
	}
	threads := runtime.GOMAXPROCS(0)
	var table []result
	binaries := map[string]string{}
	for i, r := range rows() {
		if *only != "" && !strings.Contains(r.name, *only) {
			continue
		}
		fmt.Fprintf(os.Stderr, "== %s\n", r.name)
		data := filepath.Join(work, "data", strconv.Itoa(i))
		if r.data != "" {
			// Written by the first row of the group's Go benchmark.
			data = filepath.Join(work, "data", r.data)
			if r.ours.pkg != "" {
				os.RemoveAll(data)
			}
		} else {
			os.RemoveAll(data)
		}
		if err := os.MkdirAll(data, 0o755); err != nil {
			fail(err)
		}
		res := result{row: r}
		ours, ref := &sample{metrics: map[string][]float64{}}, &sample{metrics: map[string][]float64{}}
		for round := 0; round < *rounds && res.err == nil; round++ {
			if err := run(r.ours, binaries, work, data, threads, ours); err != nil {
				res.err = fmt.Errorf("ours: %w", err)
				break
			}
			if r.ref.pkg == "" && r.ref.script == nil {
				continue
			}
			if err := run(r.ref, binaries, work, data, threads, ref); err != nil {
				res.err = fmt.Errorf("reference: %w", err)
			}
		}
		res.ours, res.ref = ours, ref
		table = append(table, res)
		fmt.Fprintln(os.Stderr, "   ", res.line(threads))
	}
	print(os.Stdout, table, *rounds, threads)
}

type result struct {
	row       row
	ours, ref *sample
	err       error
}

// run runs one side once and adds what it measured to s.
func run(sd side, binaries map[string]string, work, data string, threads int, s *sample) error {
	if sd.pkg != "" {
		bin, err := testBinary(sd.pkg, binaries, work)
		if err != nil {
			return err
		}
		return runGo(bin, sd, data, threads, s)
	}
	args := append(slices.Clone(sd.script[1:]), "--runs", strconv.Itoa(sd.runs))
	if sd.threads {
		args = append(args, "--threads", strconv.Itoa(threads))
	}
	args = append(args, data)
	cmd := exec.Command(sd.script[0], args...)
	var out bytes.Buffer
	cmd.Stdout = &out
	cmd.Stderr = os.Stderr
	if err := cmd.Run(); err != nil {
		return fmt.Errorf("%s: %w", strings.Join(sd.script, " "), err)
	}
	n := 0
	for _, line := range strings.Split(out.String(), "\n") {
		if v, ok := strings.CutPrefix(line, "seconds "); ok {
			f, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
			if err != nil {
				return fmt.Errorf("%s: bad line %q", sd.script[1], line)
			}
			s.seconds = append(s.seconds, f)
			n++
		}
	}
	if n == 0 {
		return fmt.Errorf("%s printed no \"seconds\" line:\n%s", sd.script[1], out.String())
	}
	return nil
}

// testBinary builds a package's test binary once per invocation.
func testBinary(pkg string, binaries map[string]string, work string) (string, error) {
	if b, ok := binaries[pkg]; ok {
		return b, nil
	}
	bin := filepath.Join(work, strings.ReplaceAll(strings.Trim(pkg, "./"), "/", "_")+".test")
	cmd := exec.Command("go", "test", "-c", "-o", bin, pkg)
	cmd.Stdout, cmd.Stderr = os.Stderr, os.Stderr
	if err := cmd.Run(); err != nil {
		return "", fmt.Errorf("building %s's tests: %w", pkg, err)
	}
	binaries[pkg] = bin
	return bin, nil
}

// runGo runs one benchmark (Name or Name/sub) in its package folder, as
// go test would, and reads its ns/op and extra metrics.
func runGo(bin string, sd side, data string, threads int, s *sample) error {
	parts := strings.Split(sd.bench, "/")
	pattern := "^" + parts[0] + "$"
	if len(parts) > 1 {
		pattern += "/^" + strings.Join(parts[1:], "/") + "$"
	}
	cmd := exec.Command(bin, "-test.run", "^$", "-test.bench", pattern, "-test.benchtime", sd.benchtime, "-test.count", "1")
	cmd.Dir = sd.pkg
	// The toolkit logs an error for LANG=C; a UTF-8 English tag keeps
	// the window benchmarks' output clean.
	cmd.Env = append(os.Environ(), "BENCH_DATA="+data, "LANG=en_GB.UTF-8")
	var out bytes.Buffer
	cmd.Stdout = io.MultiWriter(&out)
	cmd.Stderr = os.Stderr
	if err := cmd.Run(); err != nil {
		return fmt.Errorf("%s: %w\n%s", sd.bench, err, out.String())
	}
	want := sd.bench
	if threads > 1 {
		want += "-" + strconv.Itoa(threads)
	}
	sc := bufio.NewScanner(&out)
	for sc.Scan() {
		f := strings.Fields(sc.Text())
		if len(f) < 4 || f[0] != want {
			continue
		}
		for i := 2; i+1 < len(f); i += 2 {
			v, err := strconv.ParseFloat(f[i], 64)
			if err != nil {
				continue
			}
			if f[i+1] == "ns/op" {
				s.seconds = append(s.seconds, v/1e9)
			} else {
				s.metrics[f[i+1]] = append(s.metrics[f[i+1]], v)
			}
		}
		return nil
	}
	return fmt.Errorf("%s: no result line %q in:\n%s", sd.bench, want, out.String())
}

func median(v []float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	w := slices.Clone(v)
	slices.Sort(w)
	if len(w)%2 == 1 {
		return w[len(w)/2]
	}
	return (w[len(w)/2-1] + w[len(w)/2]) / 2
}

// duration prints seconds the way a person reads them.
func duration(s float64) string {
	switch {
	case math.IsNaN(s):
		return "—"
	case s < 1e-3:
		return fmt.Sprintf("%.0f µs", s*1e6)
	case s < 1:
		return fmt.Sprintf("%.1f ms", s*1e3)
	default:
		return fmt.Sprintf("%.2f s", s)
	}
}

func (r result) line(threads int) string {
	if r.err != nil {
		return "failed: " + r.err.Error()
	}
	o, f := median(r.ours.seconds), median(r.ref.seconds)
	return fmt.Sprintf("ours %s (%d runs), reference %s (%d runs)", duration(o), len(r.ours.seconds), duration(f), len(r.ref.seconds))
}

func print(w io.Writer, table []result, rounds, threads int) {
	fmt.Fprintf(w, "\nBoxwright benchmarks, %s, GOMAXPROCS=%d, %d rounds each side alternately; medians\n\n", time.Now().UTC().Format("2006-01-02 15:04 UTC"), threads, rounds)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "benchmark\tours\treference\tref. time\tratio\tgoal\tmet\textra")
	for _, r := range table {
		if r.err != nil {
			fmt.Fprintf(tw, "%s\tfailed\t%s\t\t\t%s\t\t%s\n", r.row.name, r.row.refName, r.row.goal, firstLine(r.err.Error()))
			continue
		}
		o, f := median(r.ours.seconds), median(r.ref.seconds)
		ratio := "—"
		if !math.IsNaN(f) {
			if o <= f {
				ratio = fmt.Sprintf("%.2f (%.1f× faster)", o/f, f/o)
			} else {
				ratio = fmt.Sprintf("%.2f", o/f)
			}
		}
		met := "—"
		if r.row.maxRatio > 0 || r.row.maxSeconds > 0 {
			ok := true
			if r.row.maxRatio > 0 && !(o/f <= r.row.maxRatio) {
				ok = false
			}
			if r.row.maxSeconds > 0 && !(o <= r.row.maxSeconds) {
				ok = false
			}
			met = map[bool]string{true: "yes", false: "no"}[ok]
		}
		var extra []string
		for _, k := range sortedKeys(r.ours.metrics) {
			extra = append(extra, fmt.Sprintf("%.4g %s", median(r.ours.metrics[k]), k))
		}
		oursText := duration(o)
		if r.row.ours.pkg == "" && len(r.ours.seconds) == 0 {
			oursText = "—"
		}
		if strings.Contains(r.row.goal, "memory") {
			oursText = "—"
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", r.row.name, oursText, orDash(r.row.refName), duration(f), ratio, r.row.goal, met, strings.Join(extra, ", "))
	}
	tw.Flush()
}

func sortedKeys(m map[string][]float64) []string {
	var k []string
	for key := range m {
		if key == "B/op" || key == "allocs/op" {
			continue
		}
		k = append(k, key)
	}
	slices.Sort(k)
	return k
}

func orDash(s string) string {
	if s == "" {
		return "—"
	}
	return s
}

func firstLine(s string) string {
	s, _, _ = strings.Cut(s, "\n")
	return s
}

func fail(err error) {
	fmt.Fprintln(os.Stderr, "benchtable:", err)
	os.Exit(1)
}
