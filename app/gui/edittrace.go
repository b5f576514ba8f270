package gui

// The edit trace is a test aid for the kill test of the window
// (.ci/killtest.sh). When the environment variable BOXWRIGHT_EDIT_TRACE
// names a file, the window appends one JSON line to it
//
//   - before each write it makes to the project file, an intent:
//     {"intent":N,"at":µs,"op":"labels","delete":[ID…],"update":[L…],"insert":[L…]}
//     {"intent":N,"op":"status","image":ID,"status":"done"}
//     {"intent":N,"op":"decide","decisions":[{"suggestion":ID,"accept":true,"label":L}]}
//     {"intent":N,"op":"undecide","suggestions":[ID…]}
//   - each time the status bar is told that everything is saved, an
//     acknowledgement of intents 1…N with the image on screen as the
//     window holds it: {"ack":N,"at":µs,"image":ID,"status":"…","labels":[L…],"pending":[ID…]}
//
// where L is {"id","image","class","origin","suggestion","box":[x0,y0,x1,y1]}
// (no id for a label not written yet) and "pending" lists the image's
// pending suggestions. Each line is written with one write on a file
// opened O_APPEND and synced before the window goes on, so a line in the
// file was written before the moment it describes. Unset, no file is
// opened, the store is not wrapped and each hook is one nil check.

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"time"

	"boxwright/app/backend"
	"boxwright/app/ops"
	"boxwright/project"
)

// editTraceEnv names the trace file; see the comment at the top.
const editTraceEnv = "BOXWRIGHT_EDIT_TRACE"

// editTrace appends the lines of the edit trace. A nil *editTrace traces
// nothing.
type editTrace struct {
	f      *os.File
	seq    int64 // intents written so far
	failed bool  // a write failed (reported once); later lines still try
}

// openEditTrace opens the trace file at path for appending; an empty path
// means no trace (nil, nil).
func openEditTrace(path string) (*editTrace, error) {
	if path == "" {
		return nil, nil
	}
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_APPEND|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("opening the edit trace %s (named by %s): %w", path, editTraceEnv, err)
	}
	return &editTrace{f: f}, nil
}

func (t *editTrace) close() {
	if t != nil {
		t.f.Close()
	}
}

// line writes v as one JSON line and syncs the file.
func (t *editTrace) line(v any) {
	b, err := json.Marshal(v)
	if err == nil {
		_, err = t.f.Write(append(b, '\n'))
	}
	if err == nil {
		err = t.f.Sync()
	}
	if err != nil && !t.failed {
		t.failed = true
		fmt.Fprintf(os.Stderr, "boxwright: writing the edit trace %s: %v\n", t.f.Name(), err)
	}
}

type traceLabel struct {
	ID         int64      `json:"id,omitempty"`
	Image      int64      `json:"image"`
	Class      int64      `json:"class"`
	Origin     string     `json:"origin"`
	Suggestion int64      `json:"suggestion,omitempty"`
	Box        [4]float64 `json:"box"`
}

func traced(l project.Label) traceLabel {
	return traceLabel{ID: l.ID, Image: l.ImageID, Class: l.ClassID, Origin: string(l.Origin), Suggestion: l.SuggestionID,
		Box: [4]float64{l.Box.X0, l.Box.Y0, l.Box.X1, l.Box.Y1}}
}

func tracedAll(ls []project.Label) []traceLabel {
	out := make([]traceLabel, len(ls))
	for i, l := range ls {
		out[i] = traced(l)
	}
	return out
}

type traceDecision struct {
	Suggestion int64       `json:"suggestion"`
	Accept     bool        `json:"accept"`
	Label      *traceLabel `json:"label,omitempty"` // what accepting makes
}

type traceIntent struct {
	Intent      int64           `json:"intent"`
	At          int64           `json:"at"` // Unix time in microseconds
	Op          string          `json:"op"`
	Delete      []int64         `json:"delete,omitempty"`
	Update      []traceLabel    `json:"update,omitempty"`
	Insert      []traceLabel    `json:"insert,omitempty"`
	Image       int64           `json:"image,omitempty"`
	Status      string          `json:"status,omitempty"`
	Decisions   []traceDecision `json:"decisions,omitempty"`
	Suggestions []int64         `json:"suggestions,omitempty"`
}

func (t *editTrace) intent(in traceIntent) {
	t.seq++
	in.Intent, in.At = t.seq, time.Now().UnixMicro()
	t.line(in)
}

type traceAck struct {
	Ack     int64        `json:"ack"`
	At      int64        `json:"at"` // Unix time in microseconds
	Image   int64        `json:"image"`
	Status  string       `json:"status,omitempty"`
	Labels  []traceLabel `json:"labels"`
	Pending []int64      `json:"pending"`
}

// ack records that the status bar is about to say "saved": every intent
// so far is acknowledged, and the image on screen holds the session's
// boxes and the pending suggestions the window shows.
func (t *editTrace) ack(u *ui) {
	if t == nil {
		return
	}
	a := traceAck{Ack: t.seq, At: time.Now().UnixMicro(), Image: u.imageID, Labels: []traceLabel{}, Pending: []int64{}}
	if u.imageID != 0 && u.selected >= 0 && u.selected < len(u.images) {
		a.Status = string(u.images[u.selected].Status)
		if u.sess != nil {
			boxes, err := u.sess.Boxes(context.Background(), u.imageID)
			if err != nil {
				a.Labels = nil // unknown; the checker skips them
			}
			for _, k := range ops.SortedKeys(boxes) {
				a.Labels = append(a.Labels, traced(boxes[k]))
			}
		} else {
			a.Labels = nil
		}
		for _, g := range u.suggestions {
			a.Pending = append(a.Pending, g.ID)
		}
	}
	t.line(a)
}

// traceWrites wraps p so that each write the window makes is traced as an
// intent first; with no trace it returns p itself.
func traceWrites(p backend.Project, t *editTrace) backend.Project {
	if t == nil {
		return p
	}
	return tracedProject{Project: p, t: t}
}

type tracedProject struct {
	backend.Project
	t *editTrace
}

func (p tracedProject) ApplyLabelChange(ctx context.Context, c project.LabelChange) ([]int64, error) {
	p.t.intent(traceIntent{Op: "labels", Delete: c.Delete, Update: tracedAll(c.Update), Insert: tracedAll(c.Insert)})
	return p.Project.ApplyLabelChange(ctx, c)
}

func (p tracedProject) SetImageStatus(ctx context.Context, id, annotatorID int64, s project.ImageStatus, by int64) error {
	p.t.intent(traceIntent{Op: "status", Image: id, Status: string(s)})
	return p.Project.SetImageStatus(ctx, id, annotatorID, s, by)
}

func (p tracedProject) Decide(ctx context.Context, reviewerID int64, ds []project.Decision) (map[int64]int64, error) {
	in := traceIntent{Op: "decide"}
	for _, d := range ds {
		td := traceDecision{Suggestion: d.SuggestionID, Accept: d.Accept}
		if g, err := p.Project.Suggestion(ctx, d.SuggestionID); err == nil && d.Accept {
			box, class, _, origin := d.Final(g)
			l := traced(project.Label{ImageID: g.ImageID, ClassID: class, Box: box, Origin: origin, SuggestionID: g.ID})
			td.Label = &l
		}
		in.Decisions = append(in.Decisions, td)
	}
	p.t.intent(in)
	return p.Project.Decide(ctx, reviewerID, ds)
}

func (p tracedProject) Undecide(ctx context.Context, ids []int64) error {
	p.t.intent(traceIntent{Op: "undecide", Suggestions: ids})
	return p.Project.Undecide(ctx, ids)
}
