package project

import (
	"errors"
	"fmt"
)

// Errors that storage returns, wrapped with what was being done; test with
// errors.Is.
var (
	ErrNotFound  = errors.New("not found")
	ErrDuplicate = errors.New("already exists")
	// ErrInUse means a record cannot be deleted while others refer to it,
	// for example a class that still has labels.
	ErrInUse = errors.New("still in use")
	// ErrInvalid means the caller passed a value that cannot be stored.
	ErrInvalid = errors.New("invalid")
	// ErrDamaged means the project file failed its consistency check or
	// storage met a damaged page; nothing more is written to it.
	ErrDamaged = errors.New("project file is damaged")
	// ErrReadOnly means the project is open for reading only.
	ErrReadOnly = errors.New("read-only")
	// ErrBusy means another program held the project for writing longer
	// than a writer waits.
	ErrBusy = errors.New("project is busy")
	// ErrNotAllowed means the person's role in a shared project does not
	// allow the change (the server's row-level security refused it).
	ErrNotAllowed = errors.New("not allowed for your role in this project")
)

// Explained returns an error whose text is the formatted message alone,
// for a message that already says what is wrong and what to do, while
// errors.Is still finds kind (and anything the message wraps with %w).
// Appending kind's own short text (": invalid") would add nothing a
// person needs.
func Explained(kind error, format string, a ...any) error {
	return &explained{inner: fmt.Errorf(format, a...), kind: kind}
}

type explained struct {
	inner error
	kind  error
}

func (e *explained) Error() string   { return e.inner.Error() }
func (e *explained) Unwrap() []error { return []error{e.inner, e.kind} }
