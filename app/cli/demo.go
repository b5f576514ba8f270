package cli

import (
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"boxwright/app/ops"
	"boxwright/assets/demo"
)

func cmdDemo(args []string, stdout, stderr io.Writer, window Window) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	noOpen := fs.Bool("no-open", false, "")
	seed := seedIn(fs, "seed", 1, "")
	images := intIn(fs, "images", demo.DefaultImages, 1, 100000, "")
	pos, err := parse(fs, args, 1, 1, "demo DIR [--no-open] [--seed N] [--images N]")
	if err != nil {
		return err
	}
	path := filepath.Join(pos[0], ops.DemoProjectName)
	if _, err := os.Stat(path); err == nil {
		fmt.Fprintf(stderr, "a demo project already exists at %s; using it (remove the folder for a fresh one)\n", path)
	} else {
		ctx, stop := interruptible()
		defer stop()
		if err := ops.MakeDemo(ctx, pos[0], demo.Config{Seed: *seed, Images: *images}, demoProgress(stderr, time.Now)); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "wrote %s\n", path)
	}
	if *noOpen {
		return nil
	}
	if code := window(path, "", stderr); code != 0 {
		return errWindowSaidWhy
	}
	return nil
}

// demoProgressEvery is how often the demo's progress is written as a line
// of its own when stderr is not a terminal (a pipe, a log file).
const demoProgressEvery = 2 * time.Second

// demoProgress reports the drawing of the demo images on stderr. On a
// terminal one line is rewritten in place (\r); anywhere else, where a \r
// would pile every update onto one line, it writes whole lines: the first
// image, then at most one line every demoProgressEvery, and the last.
func demoProgress(stderr io.Writer, now func() time.Time) func(done, total int) {
	return lineProgress(stderr, now, "drawing images %d / %d")
}

// lineProgress reports done of total with format (two %d): on a terminal
// one line rewritten in place, elsewhere whole lines — the first, at most
// one every demoProgressEvery, and the last.
func lineProgress(stderr io.Writer, now func() time.Time, format string) func(done, total int) {
	if isTerminal(stderr) {
		return func(done, total int) {
			fmt.Fprintf(stderr, "\r"+format, done, total)
			if done == total {
				fmt.Fprintln(stderr)
			}
		}
	}
	var last time.Time
	first := true
	return func(done, total int) {
		t := now()
		if first || done == total || t.Sub(last) >= demoProgressEvery {
			fmt.Fprintf(stderr, format+"\n", done, total)
			last, first = t, false
		}
	}
}

// isTerminal reports whether w is a terminal (a character device).
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	fi, err := f.Stat()
	return err == nil && fi.Mode()&os.ModeCharDevice != 0
}
