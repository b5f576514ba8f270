package ops

import (
	"context"
	"fmt"
	"slices"

	"boxwright/app/backend"
	"boxwright/project"
)

// historyLimit is how many edits undo reaches back (the screen promises
// at least 200).
const historyLimit = 1000

// Session is one person's labelling on the open project: their boxes on
// the images they touched, the undo history, and the writes to the store.
//
// Boxes have session keys that stay the same while undo and redo delete
// and re-create their rows (a re-created row gets a new ID). Every edit is
// written in its own transaction at once; a write that fails stays queued,
// in order, and is tried again with the next edit or on retry, so an edit
// the screen shows is never dropped.
type Session struct {
	st        backend.Project
	annotator project.Annotator

	nextKey int64
	keyOf   map[int64]int64                   // label ID → key
	rowOf   map[int64]int64                   // key → label ID, for boxes that have a row
	docs    map[int64]map[int64]project.Label // image → key → label (ID 0: not written yet)
	undo    []step
	redo    []step
	pending []step // written in order; the head is next
	LastErr error
}

// step is one undoable edit on one image: the boxes as they were and as
// they become, by key (absent: did not exist / no longer exists).
type step struct {
	what          string
	image         int64
	before, after map[int64]project.Label
	// decisions, when set, make this a review step: suggestions accepted
	// or rejected (undone: back to pending, their labels gone).
	decisions []project.Decision
	undoing   bool
}

func (s step) reversed() step {
	return step{what: s.what, image: s.image, before: s.after, after: s.before, decisions: s.decisions, undoing: !s.undoing}
}

// Decide records a reviewer's decisions on suggestions as one undoable
// step. Unlike box edits it is not queued on failure: the store refuses
// it whole (for example when another copy decided first) and nothing
// changes.
func (s *Session) Decide(ctx context.Context, imageID int64, what string, ds []project.Decision) error {
	if len(ds) == 0 {
		return nil
	}
	if len(s.pending) > 0 {
		if err := s.Flush(ctx); err != nil {
			return fmt.Errorf("earlier edits are not saved yet, so suggestions cannot be decided: %w", err)
		}
	}
	st := step{what: what, image: imageID, decisions: ds}
	if err := s.review(ctx, st); err != nil {
		return err
	}
	s.undo = append(s.undo, st)
	if len(s.undo) > historyLimit {
		s.undo = s.undo[len(s.undo)-historyLimit:]
	}
	s.redo = nil
	return nil
}

// review writes a review step (or its undoing) and forgets the boxes in
// memory, which now differ from the file's.
func (s *Session) review(ctx context.Context, st step) error {
	var err error
	if st.undoing {
		ids := make([]int64, len(st.decisions))
		for i, d := range st.decisions {
			ids[i] = d.SuggestionID
		}
		err = s.st.Undecide(ctx, ids)
	} else {
		_, err = s.st.Decide(ctx, s.annotator.ID, st.decisions)
	}
	if err != nil {
		return fmt.Errorf("%s: %w", st.what, err)
	}
	for img := range s.docs {
		if !s.hasPending(img) {
			delete(s.docs, img)
		}
	}
	return nil
}

// NewSession starts annotator a's labelling session on st with an empty
// undo history.
func NewSession(st backend.Project, a project.Annotator) *Session {
	return &Session{st: st, annotator: a, keyOf: map[int64]int64{}, rowOf: map[int64]int64{}, docs: map[int64]map[int64]project.Label{}}
}

// load returns the person's boxes on an image by key: from the store, or
// from memory while edits of that image wait to be written.
func (s *Session) load(ctx context.Context, imageID int64) (map[int64]project.Label, error) {
	if doc, ok := s.docs[imageID]; ok && s.hasPending(imageID) {
		return doc, nil
	}
	ls, err := s.st.Labels(ctx, project.LabelFilter{ImageID: imageID, AnnotatorID: s.annotator.ID})
	if err != nil {
		// A server that cannot be reached for a moment: work on from what
		// was read last, so that the edit is kept and queued rather than
		// lost (the retry path writes it when the server is back).
		if doc, ok := s.docs[imageID]; ok {
			return doc, nil
		}
		return nil, err
	}
	doc := map[int64]project.Label{}
	for _, l := range ls {
		k, ok := s.keyOf[l.ID]
		if !ok {
			s.nextKey++
			k = s.nextKey
			s.keyOf[l.ID], s.rowOf[k] = k, l.ID
		}
		doc[k] = l
	}
	s.docs[imageID] = doc
	return doc, nil
}

func (s *Session) hasPending(imageID int64) bool {
	return slices.ContainsFunc(s.pending, func(p step) bool { return p.image == imageID })
}

// Boxes are the person's boxes on the image, by key.
func (s *Session) Boxes(ctx context.Context, imageID int64) (map[int64]project.Label, error) {
	doc, err := s.load(ctx, imageID)
	if err != nil {
		return nil, err
	}
	return maps(doc), nil
}

func maps(m map[int64]project.Label) map[int64]project.Label {
	out := make(map[int64]project.Label, len(m))
	for k, v := range m {
		out[k] = v
	}
	return out
}

// Create adds a drawn box of a class and returns its key.
func (s *Session) Create(ctx context.Context, imageID, classID int64, b project.Box) (int64, error) {
	if _, err := s.load(ctx, imageID); err != nil {
		return 0, err
	}
	s.nextKey++
	k := s.nextKey
	l := project.Label{ImageID: imageID, ClassID: classID, AnnotatorID: s.annotator.ID, Box: b, Origin: project.OriginDrawn}
	return k, s.do(ctx, step{what: "draw a box", image: imageID, before: map[int64]project.Label{}, after: map[int64]project.Label{k: l}})
}

// Change gives boxes new boxes or classes; keys missing from the image
// are ignored. what names the edit for the undo menu.
func (s *Session) Change(ctx context.Context, imageID int64, what string, f func(key int64, l project.Label) project.Label, keys ...int64) error {
	doc, err := s.load(ctx, imageID)
	if err != nil {
		return err
	}
	st := step{what: what, image: imageID, before: map[int64]project.Label{}, after: map[int64]project.Label{}}
	for _, k := range keys {
		l, ok := doc[k]
		if !ok {
			continue
		}
		nl := f(k, l)
		if nl.Box == l.Box && nl.ClassID == l.ClassID {
			continue
		}
		st.before[k], st.after[k] = l, nl
	}
	if len(st.before) == 0 {
		return nil
	}
	return s.do(ctx, st)
}

// Delete removes boxes.
func (s *Session) Delete(ctx context.Context, imageID int64, what string, keys ...int64) error {
	doc, err := s.load(ctx, imageID)
	if err != nil {
		return err
	}
	st := step{what: what, image: imageID, before: map[int64]project.Label{}, after: map[int64]project.Label{}}
	for _, k := range keys {
		if l, ok := doc[k]; ok {
			st.before[k] = l
		}
	}
	if len(st.before) == 0 {
		return nil
	}
	return s.do(ctx, st)
}

// Duplicate copies boxes (as drawn boxes of this person) moved by
// (dx, dy) and returns the new keys.
func (s *Session) Duplicate(ctx context.Context, imageID int64, move func(project.Box) project.Box, keys ...int64) ([]int64, error) {
	doc, err := s.load(ctx, imageID)
	if err != nil {
		return nil, err
	}
	st := step{what: "duplicate", image: imageID, before: map[int64]project.Label{}, after: map[int64]project.Label{}}
	var out []int64
	for _, k := range keys {
		l, ok := doc[k]
		if !ok {
			continue
		}
		s.nextKey++
		out = append(out, s.nextKey)
		st.after[s.nextKey] = project.Label{ImageID: imageID, ClassID: l.ClassID, AnnotatorID: s.annotator.ID, Box: move(l.Box), Origin: project.OriginDrawn}
	}
	if len(out) == 0 {
		return nil, nil
	}
	return out, s.do(ctx, st)
}

// do applies a new edit: it joins the history, clears redo, and is
// written.
func (s *Session) do(ctx context.Context, st step) error {
	s.undo = append(s.undo, st)
	if len(s.undo) > historyLimit {
		s.undo = s.undo[len(s.undo)-historyLimit:]
	}
	s.redo = nil
	return s.apply(ctx, st)
}

// CanUndo and CanRedo name the edit that Undo or Redo would reverse or
// repeat ("" when none).
// UndoDepth is the number of edits that can be undone.
func (s *Session) UndoDepth() int { return len(s.undo) }

// CanUndo names the edit that Undo would undo ("" when none).
func (s *Session) CanUndo() string { return lastWhat(s.undo) }

// CanRedo names the edit that Redo would redo ("" when none).
func (s *Session) CanRedo() string { return lastWhat(s.redo) }

func lastWhat(h []step) string {
	if len(h) == 0 {
		return ""
	}
	return h[len(h)-1].what
}

// Undo reverses the last edit and returns the image it was on (0 when
// there is nothing to undo).
func (s *Session) Undo(ctx context.Context) (int64, error) {
	if len(s.undo) == 0 {
		return 0, nil
	}
	st := s.undo[len(s.undo)-1]
	s.undo = s.undo[:len(s.undo)-1]
	s.redo = append(s.redo, st)
	err := s.apply(ctx, st.reversed())
	if err != nil && st.decisions != nil { // refused whole: nothing changed
		s.redo = s.redo[:len(s.redo)-1]
		s.undo = append(s.undo, st)
	}
	return st.image, err
}

// Redo repeats the last undone edit.
func (s *Session) Redo(ctx context.Context) (int64, error) {
	if len(s.redo) == 0 {
		return 0, nil
	}
	st := s.redo[len(s.redo)-1]
	s.redo = s.redo[:len(s.redo)-1]
	s.undo = append(s.undo, st)
	err := s.apply(ctx, st)
	if err != nil && st.decisions != nil {
		s.undo = s.undo[:len(s.undo)-1]
		s.redo = append(s.redo, st)
	}
	return st.image, err
}

// apply changes the boxes in memory and queues the write.
func (s *Session) apply(ctx context.Context, st step) error {
	if st.decisions != nil {
		return s.review(ctx, st)
	}
	doc, err := s.load(ctx, st.image)
	if err != nil {
		return err
	}
	for k := range st.before {
		if _, still := st.after[k]; !still {
			delete(doc, k)
		}
	}
	for k, l := range st.after {
		if old, ok := doc[k]; ok {
			l.ID = old.ID // the row it lives in now
		} else {
			l.ID = 0 // (re)created: gets a row when written
		}
		doc[k] = l
	}
	s.pending = append(s.pending, st)
	return s.Flush(ctx)
}

// Flush writes the queued edits in order, each in its own transaction, and
// stops at the first failure (kept for the next try).
func (s *Session) Flush(ctx context.Context) error {
	for len(s.pending) > 0 {
		if err := s.write(ctx, s.pending[0]); err != nil {
			s.LastErr = err
			return err
		}
		s.pending = s.pending[1:]
	}
	s.LastErr = nil
	return nil
}

// Unsaved is the number of edits waiting to be written.
func (s *Session) Unsaved() int { return len(s.pending) }

// write stores one step. Row IDs come from the boxes' current rows; a row
// ID learnt here is recorded in memory only after the commit.
func (s *Session) write(ctx context.Context, st step) error {
	doc := s.docs[st.image]
	var c project.LabelChange
	var insertKeys []int64
	for k := range st.before {
		if _, still := st.after[k]; !still {
			if id := s.rowOf[k]; id != 0 {
				c.Delete = append(c.Delete, id)
			}
		}
	}
	for _, k := range SortedKeys(st.after) {
		l := st.after[k]
		if id := s.rowOf[k]; id != 0 {
			l.ID = id
			c.Update = append(c.Update, l)
		} else {
			c.Insert = append(c.Insert, l)
			insertKeys = append(insertKeys, k)
		}
	}
	if c.Empty() {
		return nil
	}
	ids, err := s.st.ApplyLabelChange(ctx, c)
	if err != nil {
		return fmt.Errorf("saving “%s”: %w", st.what, err)
	}
	for _, id := range c.Delete {
		delete(s.rowOf, s.keyOf[id])
		delete(s.keyOf, id)
	}
	for i, k := range insertKeys {
		s.keyOf[ids[i]], s.rowOf[k] = k, ids[i]
		if l, ok := doc[k]; ok {
			l.ID = ids[i]
			doc[k] = l
		}
	}
	for _, l := range c.Update {
		if k := s.keyOf[l.ID]; k != 0 {
			if dl, ok := doc[k]; ok {
				dl.ID = l.ID
				doc[k] = dl
			}
		}
	}
	return nil
}

// SortedKeys are the keys of a session's boxes in increasing order.
func SortedKeys(m map[int64]project.Label) []int64 {
	ks := make([]int64, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	slices.Sort(ks)
	return ks
}

// Forget drops the boxes of an image from memory (they changed in the
// file, for example by a review elsewhere) unless edits of it still wait
// to be written.
func (s *Session) Forget(imageID int64) {
	if !s.hasPending(imageID) {
		delete(s.docs, imageID)
	}
}
