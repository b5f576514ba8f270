package gui

import (
	"bytes"
	"io"
	"strings"
	"sync"
)

// toolkitNoise are the toolkit's log messages that tell the user nothing
// they can act on, and why each is harmless:
//   - "Preferences load error": the toolkit watches its own preferences
//     file and reads it while it is itself rewriting it (an empty read
//     gives EOF); the values in memory are unaffected.
//   - "Getting favorite locations": a file dialog looks for the usual
//     home folders (Videos, Music…) and logs each one that is missing.
//   - "Error parsing user locale": LANG=C or POSIX is not a language tag;
//     the toolkit falls back to English, which is what C means.
var toolkitNoise = []string{"Preferences load error", "Getting favorite locations", "Error parsing user locale"}

// quietLog passes log lines on to w except the toolkit's noise: a
// "Fyne error:" line naming one of toolkitNoise and the "Cause:" and "At:"
// lines that follow it. The log package writes one line per Write.
type quietLog struct {
	mu       sync.Mutex
	w        io.Writer
	dropping bool
}

func (q *quietLog) Write(p []byte) (int, error) {
	q.mu.Lock()
	defer q.mu.Unlock()
	line := string(bytes.TrimRight(p, "\n"))
	if i := strings.Index(line, "Fyne error:"); i >= 0 {
		reason := strings.TrimSpace(line[i+len("Fyne error:"):])
		q.dropping = false
		for _, n := range toolkitNoise {
			if strings.HasPrefix(reason, n) {
				q.dropping = true
			}
		}
	} else if !strings.Contains(line, "  Cause:") && !strings.Contains(line, "  At:") {
		q.dropping = false
	}
	if q.dropping {
		return len(p), nil
	}
	return q.w.Write(p)
}
