package cli

import (
	"context"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/project"
	"boxwright/store"
)

// benchAgreeProject makes a project of 10,000 images where n annotators
// drew the same 20 objects each, with jitter, misses and swapped classes.
func benchAgreeProject(b *testing.B, n int) string {
	b.Helper()
	path := filepath.Join(b.TempDir(), "agree.boxw")
	st, err := store.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	ctx := context.Background()
	var classes []project.Class
	for _, name := range []string{"sailboat", "motorboat", "buoy", "kayak"} {
		c, _ := st.AddClass(ctx, project.Class{Name: name})
		classes = append(classes, c)
	}
	var anns []project.Annotator
	for i := 0; i < n; i++ {
		a, _ := st.AddAnnotator(ctx, fmt.Sprintf("a%d", i))
		anns = append(anns, a)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	var labels []project.Label
	for i := 0; i < 10000; i++ {
		im, err := st.AddImage(ctx, project.Image{Path: fmt.Sprintf("img/%05d.jpg", i), SHA256: fmt.Sprintf("%064x", i+1), Width: 1280, Height: 960, Orientation: 1})
		if err != nil {
			b.Fatal(err)
		}
		for k := 0; k < 20; k++ {
			x, y := rng.Float64()*1100, rng.Float64()*800
			w, h := 20+rng.Float64()*80, 20+rng.Float64()*80
			c := classes[rng.IntN(len(classes))].ID
			for _, a := range anns {
				if rng.Float64() < 0.05 {
					continue
				}
				j := func() float64 { return rng.NormFloat64() * 2 }
				labels = append(labels, project.Label{ImageID: im.ID, ClassID: c, AnnotatorID: a.ID, Box: project.Rect(x+j(), y+j(), x+w+j(), y+h+j())})
			}
		}
	}
	if err := st.AddLabels(ctx, labels); err != nil {
		b.Fatal(err)
	}
	return path
}

// The whole "agree" command, reading the project file included. Where
// the system says, the peak resident memory of a process that runs the
// command once is reported beside it (MiB-peak-rss).
func benchmarkAgreeCommand(b *testing.B, n int) {
	path := benchAgreeProject(b, n)
	var names []string
	for i := 0; i < n; i++ {
		names = append(names, fmt.Sprintf("a%d", i))
	}
	args := []string{path, "--annotators", strings.Join(names, ","), "--json"}
	b.ResetTimer()
	for range b.N {
		if err := cmdAgree(args, io.Discard, io.Discard); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	if mib, ok, err := agreePeakRSS(args); err != nil {
		b.Fatal(err)
	} else if ok {
		b.ReportMetric(mib, "MiB-peak-rss")
	}
}

// agreeChildEnv carries the command line to the process agreePeakRSS
// starts (this test binary again, running TestAgreeChildProcess).
const agreeChildEnv = "BOXWRIGHT_AGREE_CHILD"

func agreeChildCommand(args []string) *exec.Cmd {
	cmd := exec.Command(os.Args[0], "-test.run=^TestAgreeChildProcess$", "-test.count=1")
	cmd.Env = append(os.Environ(), agreeChildEnv+"="+strings.Join(args, "\x1f"))
	return cmd
}

// TestAgreeChildProcess runs one agree command for the benchmarks' memory
// figure; on its own it has nothing to do.
func TestAgreeChildProcess(t *testing.T) {
	line := os.Getenv(agreeChildEnv)
	if line == "" {
		t.Skip("run by the agree benchmarks, in a process of its own")
	}
	if err := cmdAgree(strings.Split(line, "\x1f"), io.Discard, io.Discard); err != nil {
		t.Fatal(err)
	}
	reportPeakRSS()
}

func BenchmarkAgreeCommand10000Images2Annotators(b *testing.B) { benchmarkAgreeCommand(b, 2) }
func BenchmarkAgreeCommand10000Images5Annotators(b *testing.B) { benchmarkAgreeCommand(b, 5) }
