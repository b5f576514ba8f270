package postgres

import (
	"context"
	"errors"
	"sync"
	"testing"
	"time"

	"boxwright/project"
	"boxwright/store/postgres/pgtest"
)

// liveProject is teamProject with a class and two images, made by SQL as
// the owner.
func liveProject(t *testing.T) (*pgtest.Server, *Store) {
	t.Helper()
	srv, s := teamProject(t)
	srv.Exec(t, "harbour", `INSERT INTO classes(name, color, position) VALUES ('buoy', '#00aa88', 1);
		INSERT INTO images(path, sha256, width, height, orientation) VALUES ('a.jpg', repeat('a', 64), 640, 480, 1), ('b.jpg', repeat('b', 64), 640, 480, 1)`)
	return srv, s
}

// watcher collects what Watch delivers.
type watcher struct {
	mu  sync.Mutex
	got []Change
	at  []time.Time
}

func (w *watcher) deliver(cs []Change) {
	w.mu.Lock()
	defer w.mu.Unlock()
	for _, c := range cs {
		w.got = append(w.got, c)
		w.at = append(w.at, time.Now())
	}
}

// waitFor waits up to limit for a change matching ok and returns when it
// arrived.
func (w *watcher) waitFor(t *testing.T, limit time.Duration, ok func(Change) bool) time.Time {
	t.Helper()
	deadline := time.Now().Add(limit)
	for time.Now().Before(deadline) {
		w.mu.Lock()
		for i, c := range w.got {
			if ok(c) {
				at := w.at[i]
				w.got, w.at = w.got[i+1:], w.at[i+1:]
				w.mu.Unlock()
				return at
			}
		}
		w.mu.Unlock()
		time.Sleep(5 * time.Millisecond)
	}
	t.Fatalf("no matching change within %v; got %v", limit, w.got)
	return time.Time{}
}

// Another client's committed label reaches a watching client well within
// 2 seconds; after the server restarts, the watcher says "read
// everything" once and hears changes again.
func TestWatchSeesOthersChanges(t *testing.T) {
	srv, _ := liveProject(t)
	ines := openAs(t, srv, "ines")
	tomas := connectAs(t, srv, "tomas")
	ctx, cancel := context.WithCancel(bg)
	defer cancel()
	w := &watcher{}
	done := make(chan error, 1)
	go func() { done <- ines.Watch(ctx, w.deliver) }()
	time.Sleep(300 * time.Millisecond) // listening

	var tomasID int64
	tomas.QueryRow(bg, "SELECT id FROM annotators WHERE name = 'tomas'").Scan(&tomasID)
	sent := time.Now()
	if _, err := tomas.Exec(bg, `INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin) VALUES (2, 1, $1, 1, 1, 9, 9, 'drawn')`, tomasID); err != nil {
		t.Fatal(err)
	}
	at := w.waitFor(t, 2*time.Second, func(c Change) bool { return c.Table == "labels" && c.ImageID == 2 && c.AnnotatorID == tomasID })
	t.Logf("a label reached the watcher %v after its insert", at.Sub(sent))

	srv.Restart(t)
	w.waitFor(t, 10*time.Second, func(c Change) bool { return c == Everything })
	tomas2 := connectAs(t, srv, "tomas")
	time.Sleep(300 * time.Millisecond)
	if _, err := tomas2.Exec(bg, `INSERT INTO image_status(image_id, annotator_id, status) VALUES (1, $1, 'done')`, tomasID); err != nil {
		t.Fatal(err)
	}
	w.waitFor(t, 2*time.Second, func(c Change) bool { return c.Table == "image_status" && c.ImageID == 1 })
	cancel()
	if err := <-done; !errors.Is(err, context.Canceled) {
		t.Errorf("Watch ended with %v", err)
	}
}

// One statement touching many rows announces each image once, not each
// row: a big import is not thousands of messages.
func TestAnnouncedOncePerImage(t *testing.T) {
	srv, _ := liveProject(t)
	ines := openAs(t, srv, "ines")
	ctx, cancel := context.WithCancel(bg)
	defer cancel()
	w := &watcher{}
	go ines.Watch(ctx, w.deliver)
	time.Sleep(300 * time.Millisecond)
	srv.Exec(t, "harbour", `INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin)
		SELECT 1 + g % 2, 1, (SELECT id FROM annotators WHERE name = 'ines'), g, 1, g + 5, 9, 'imported' FROM generate_series(1, 1000) g`)
	w.waitFor(t, 2*time.Second, func(c Change) bool { return c.Table == "labels" && c.ImageID == 1 })
	w.waitFor(t, 2*time.Second, func(c Change) bool { return c.Table == "labels" && c.ImageID == 2 })
	time.Sleep(200 * time.Millisecond)
	w.mu.Lock()
	defer w.mu.Unlock()
	if len(w.got) != 0 {
		t.Errorf("1000 labels on 2 images announced %d more times: %v", len(w.got), w.got[:min(5, len(w.got))])
	}
}

// Claims show who else is on an image, lapse when not renewed, and can
// only be made for oneself.
func TestClaims(t *testing.T) {
	srv, _ := liveProject(t)
	ines, tomas := openAs(t, srv, "ines"), openAs(t, srv, "tomas")
	me := func(s *Store) int64 {
		m, err := s.Me(bg)
		if err != nil {
			t.Fatal(err)
		}
		var id int64
		s.pool.QueryRow(bg, "SELECT annotator_id FROM members WHERE role_name = $1", m.Role).Scan(&id)
		return id
	}
	inesID, tomasID := me(ines), me(tomas)
	if others, err := ines.Claim(bg, 1, inesID); err != nil || len(others) != 0 {
		t.Fatalf("ines claims image 1: %v, %v", others, err)
	}
	others, err := tomas.Claim(bg, 1, tomasID)
	if err != nil || len(others) != 1 || others[0].Annotator != "ines" {
		t.Fatalf("tomas claims image 1: %v, %v; want to hear of ines", others, err)
	}
	if _, err := tomas.Claim(bg, 2, inesID); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("tomas claiming for ines: %v, want ErrNotAllowed", err)
	}
	if err := tomas.Release(bg, 1, tomasID); err != nil {
		t.Fatal(err)
	}
	old := ClaimLasts
	ClaimLasts = 50 * time.Millisecond
	defer func() { ClaimLasts = old }()
	ines.Claim(bg, 2, inesID)
	time.Sleep(150 * time.Millisecond)
	cs, _ := ines.Claims(bg)
	for _, c := range cs {
		if c.ImageID == 2 {
			t.Errorf("a claim outlived its time: %+v", c)
		}
	}
	if len(cs) != 1 || cs[0].ImageID != 1 || cs[0].Annotator != "ines" {
		t.Errorf("live claims %+v, want ines's on image 1", cs)
	}
}

// Owners hand images out; annotators cannot.
func TestAssign(t *testing.T) {
	srv, owner := liveProject(t)
	var ids []int64
	rows, _ := owner.pool.Query(bg, "SELECT annotator_id FROM members WHERE kind = 'annotator' ORDER BY role_name")
	for rows.Next() {
		var id int64
		rows.Scan(&id)
		ids = append(ids, id)
	}
	rows.Close()
	plan, err := owner.Assign(bg, []int64{1, 2}, ids, 2)
	if err != nil {
		t.Fatal(err)
	}
	got, err := owner.Assignments(bg)
	if err != nil || len(got[1]) != 2 || len(got[2]) != 2 || len(plan[1]) != 2 {
		t.Errorf("assignments %v, %v", got, err)
	}
	if _, err := openAs(t, srv, "ines").Assign(bg, []int64{1}, ids, 1); !errors.Is(err, project.ErrNotAllowed) {
		t.Errorf("an annotator assigning: %v, want ErrNotAllowed", err)
	}
}
