package cli

import (
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"boxwright/app/ops"
	"boxwright/assets/demo"
)

func cmdDemo(args []string, stdout, stderr io.Writer, window Window) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	noOpen := fs.Bool("no-open", false, "")
	seed := fs.Int64("seed", 1, "")
	images := fs.Int("images", demo.DefaultImages, "")
	pos, err := parse(fs, args, 1, 1, "demo DIR [--no-open] [--seed N] [--images N]")
	if err != nil {
		return err
	}
	if *images <= 0 || *images > 100000 {
		return usageError("--images must be between 1 and 100000")
	}
	path := filepath.Join(pos[0], ops.DemoProjectName)
	if _, err := os.Stat(path); err == nil {
		fmt.Fprintf(stderr, "a demo project already exists at %s; using it (remove the folder for a fresh one)\n", path)
	} else {
		ctx, stop := interruptible()
		defer stop()
		if err := ops.MakeDemo(ctx, pos[0], demo.Config{Seed: *seed, Images: *images}, func(done, total int) {
			fmt.Fprintf(stderr, "\rdrawing images %d / %d", done, total)
			if done == total {
				fmt.Fprintln(stderr)
			}
		}); err != nil {
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
