package project

import (
	"errors"
	"io"
	"testing"
)

func TestExplainedKeepsKindOutOfText(t *testing.T) {
	err := Explained(ErrInvalid, "the box at line %d is upside down: %w", 3, io.ErrUnexpectedEOF)
	if got, want := err.Error(), "the box at line 3 is upside down: unexpected EOF"; got != want {
		t.Errorf("text %q, want %q", got, want)
	}
	if !errors.Is(err, ErrInvalid) || !errors.Is(err, io.ErrUnexpectedEOF) {
		t.Errorf("errors.Is lost the kind or the wrapped cause: %v", err)
	}
	if errors.Is(err, ErrNotFound) {
		t.Error("matches a kind it is not")
	}
}
