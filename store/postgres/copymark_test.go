package postgres

import (
	"errors"
	"strings"
	"testing"
)

// A project marked as being copied into is refused by Open with a message
// that says how to start over; DiscardCopy empties the database so that
// Create works again, and refuses a project without the mark.
func TestCopyMark(t *testing.T) {
	srv, s := ownerProject(t)
	dsn := srv.DSN("olga", "olga-pw", "harbour")
	if err := s.DiscardCopy(bg); err == nil {
		t.Fatal("DiscardCopy dropped a project that no copy marked")
	}
	if err := s.MarkCopying(bg, "/tmp/harbour.boxw"); err != nil {
		t.Fatal(err)
	}
	if o, err := Open(bg, dsn); !errors.Is(err, ErrUnfinishedCopy) || !strings.Contains(err.Error(), "did not finish") ||
		!strings.Contains(err.Error(), "/tmp/harbour.boxw") || !strings.Contains(err.Error(), "boxwright copy again") {
		if o != nil {
			o.Close()
		}
		t.Fatalf("open of an unfinished copy: %v", err)
	}
	if err := s.FinishCopying(bg); err != nil {
		t.Fatal(err)
	}
	o, err := Open(bg, dsn)
	if err != nil {
		t.Fatalf("open after the copy finished: %v", err)
	}
	o.Close()

	if err := s.MarkCopying(bg, "elsewhere"); err != nil {
		t.Fatal(err)
	}
	if err := s.DiscardCopy(bg); err != nil {
		t.Fatal(err)
	}
	if _, err := Open(bg, dsn); err == nil || !strings.Contains(err.Error(), "holds no Boxwright project") {
		t.Fatalf("open after the discard: %v", err)
	}
	again, err := Create(bg, dsn)
	if err != nil {
		t.Fatalf("create after the discard: %v", err)
	}
	again.Close()
}
