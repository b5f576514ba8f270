// Package cli is Boxwright's command line. Run dispatches through the one
// table in commands; each family of commands has its own file (project.go:
// new, open, add-images, relink, classes, info, images; dataset.go: import,
// export; suggestions.go; similar.go; eval.go; agree.go: agree, consensus;
// kappa.go; copy.go; demo.go). A command parses its flags with parse, does its work
// through package ops, and prints text or JSON; the window is handed in by
// main, so this package needs no GUI toolkit.
package cli

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"time"

	"boxwright/app/backend"
)

// usageError marks a wrongly typed command line (exit status 2).
type usageError string

func (e usageError) Error() string { return string(e) }

// command runs one sub-command with the arguments after its name.
type command func(args []string, stdout, stderr io.Writer) error

// Window opens the main window on a project (an empty path shows the
// welcome screen), labelling as annotator when that is not empty, and
// returns the program's exit status when the window closes.
type Window func(path, annotator string, stderr io.Writer) int

// commands is the one table of sub-commands. Those that open the window
// (open, and demo unless --no-open) get it from the caller, so that this
// package needs no GUI toolkit.
func commands(window Window) map[string]command {
	return map[string]command{
		"open":        func(args []string, stdout, stderr io.Writer) error { return cmdOpen(args, stderr, window) },
		"new":         cmdNew,
		"add-images":  cmdAddImages,
		"relink":      cmdRelink,
		"classes":     cmdClasses,
		"info":        cmdInfo,
		"images":      cmdImages,
		"check":       cmdCheck,
		"recover":     cmdRecover,
		"import":      cmdImport,
		"export":      cmdExport,
		"suggestions": cmdSuggestions,
		"similar":     cmdSimilar,
		"eval":        cmdEval,
		"agree":       cmdAgree,
		"consensus":   cmdConsensus,
		"kappa":       cmdKappa,
		"models":      cmdModels,
		"train":       cmdTrain,
		"detect":      cmdDetect,
		"team":        cmdTeam,
		"assign":      cmdAssign,
		"copy":        cmdCopy,
		"demo":        func(args []string, stdout, stderr io.Writer) error { return cmdDemo(args, stdout, stderr, window) },
	}
}

// parse reads flags wherever they stand among the positional arguments and
// checks the number of positionals.
func parse(fs *flag.FlagSet, args []string, minPos, maxPos int, synopsis string) ([]string, error) {
	fs.SetOutput(io.Discard)
	twice := onceEach(fs)
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if *twice != nil {
				err = *twice // without the flag package's "invalid value ... for flag"
			}
			return nil, usageError(fmt.Sprintf("%v\nusage: boxwright %s", err, synopsis))
		}
		args = fs.Args()
		if len(args) == 0 {
			break
		}
		pos = append(pos, args[0])
		args = args[1:]
	}
	if len(pos) < minPos || (maxPos >= 0 && len(pos) > maxPos) {
		return nil, usageError("usage: boxwright " + synopsis)
	}
	return pos, nil
}

// interruptible is a context cancelled by Ctrl-C, so that long jobs stop
// cleanly and keep what they already saved.
func interruptible() (context.Context, context.CancelFunc) {
	return signal.NotifyContext(context.Background(), os.Interrupt)
}

// openCLI opens the project named on the command line with a context that
// Ctrl-C cancels; done closes both.
func openCLI(path string) (backend.Project, context.Context, func(), error) {
	return opened(backend.Open(path))
}

// openReading is openCLI for commands that only read: the project is
// opened read-only, so it works on read-only files and leaves the file as
// it was. A damaged project opens with a warning, so that what is still
// readable can be looked at and exported.
func openReading(path string) (backend.Project, context.Context, func(), error) {
	s, ctx, done, err := opened(backend.OpenForReading(path))
	if err == nil && s.Damage() != "" {
		fmt.Fprintf(noticeOut, "boxwright: warning: %s is damaged (%s); showing what can still be read, `boxwright check` says more\n", path, s.Damage())
	}
	return s, ctx, done, err
}

// noticeOut receives messages that are not a command's output, such as a
// writer waiting for another program.
var noticeOut io.Writer = os.Stderr

func opened(s backend.Project, err error) (backend.Project, context.Context, func(), error) {
	if err != nil {
		return nil, nil, nil, err
	}
	s.SetWaitNotice(func(m string) { fmt.Fprintln(noticeOut, "boxwright: "+m) })
	ctx, stop := interruptible()
	return s, ctx, func() { stop(); s.Close() }, nil
}

func writeJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false) // read by people and scripts, not browsers
	return enc.Encode(v)
}

// progressPrinter reports long intakes (200 files or more) on stderr:
// every 100 files on a terminal, in whole lines elsewhere (lineProgress).
func progressPrinter(stderr io.Writer, quiet *bool) func(done, total int) {
	var p func(done, total int)
	return func(done, total int) {
		if *quiet || total < 200 || (done%100 != 0 && done != total) {
			return
		}
		if p == nil {
			p = lineProgress(stderr, time.Now, "%d / %d files")
		}
		p(done, total)
	}
}

// ExitInterrupted is the exit status of a command stopped by Ctrl+C: 128
// plus the number of SIGINT, as shells report a program that signal ended
// (common practice).
const ExitInterrupted = 130

// errWindowSaidWhy is a window that could not open or closed with an
// error it has already printed: saying more would only repeat it.
var errWindowSaidWhy = errors.New("the window closed with an error")

// Run dispatches a command line and returns the exit status: 0 on
// success, 1 when the command failed, 2 for a mistyped command line,
// ExitInterrupted when Ctrl+C stopped it. With no arguments it opens the
// window.
func Run(args []string, stdout, stderr io.Writer, window Window) int {
	if len(args) == 0 {
		return window("", "", stderr)
	}
	cmd, ok := commands(window)[args[0]]
	if !ok {
		if args[0] == "help" || args[0] == "-h" || args[0] == "--help" {
			fmt.Fprint(stdout, usage)
			return 0
		}
		fmt.Fprintf(stderr, "boxwright: unknown command %q\n\n%s", args[0], usage)
		return 2
	}
	if err := cmd(args[1:], stdout, stderr); err != nil {
		if !errors.Is(err, errWindowSaidWhy) {
			fmt.Fprintf(stderr, "boxwright %s: %v\n", args[0], err)
		}
		if _, isUsage := err.(usageError); isUsage {
			return 2
		}
		if errors.Is(err, context.Canceled) {
			return ExitInterrupted
		}
		return 1
	}
	return 0
}

// onceEach makes every flag of fs that takes one value refuse a second,
// different value: "--annotator Ines --annotator Tomas" used to export
// Tomas's labels without a word. Repeating the same value is harmless and
// allowed; flags that collect values (--map) say so with repeatable.
// The refusal is also left in the returned slot.
func onceEach(fs *flag.FlagSet) *error {
	var twice error
	fs.VisitAll(func(f *flag.Flag) {
		if _, ok := f.Value.(interface{ repeatable() }); !ok {
			f.Value = &onceValue{Value: f.Value, name: f.Name, twice: &twice}
		}
	})
	return &twice
}

type onceValue struct {
	flag.Value
	name  string
	first *string
	twice *error
}

func (o *onceValue) Set(s string) error {
	if o.first != nil && *o.first != s {
		*o.twice = fmt.Errorf("--%s is given twice, as %q and as %q: give it once", o.name, *o.first, s)
		return *o.twice
	}
	o.first = &s
	return o.Value.Set(s)
}

// IsBoolFlag keeps a bool flag usable without a value (--json).
func (o *onceValue) IsBoolFlag() bool {
	b, ok := o.Value.(interface{ IsBoolFlag() bool })
	return ok && b.IsBoolFlag()
}
