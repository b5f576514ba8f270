package backend

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/project"
)

func TestLocate(t *testing.T) {
	dir := t.TempDir()
	conns := filepath.Join(dir, "connections")
	t.Setenv("BOXWRIGHT_CONNECTIONS", conns)
	os.WriteFile(conns, []byte("# team projects\nharbour  postgres://ines@db.example.org/harbour\n\nsecret postgres://ines:hush@db/p\n"), 0o644)

	for _, c := range []struct {
		arg       string
		file, srv string
		wantErr   string
		wantErrIs error
	}{
		{arg: "a/b.boxw", file: "a/b.boxw"},
		{arg: "postgres://u@h/db", srv: "postgres://u@h/db"},
		{arg: "postgresql://u@h/db", srv: "postgresql://u@h/db"},
		{arg: "@harbour", srv: "postgres://ines@db.example.org/harbour"},
		{arg: "@nobody", wantErr: "it names: harbour, secret", wantErrIs: project.ErrNotFound},
		{arg: "@secret", wantErr: "chmod 600", wantErrIs: project.ErrInvalid},
		{arg: "@", wantErr: "needs a name", wantErrIs: project.ErrInvalid},
	} {
		w, err := Locate(c.arg)
		if c.wantErr != "" {
			if err == nil || !strings.Contains(err.Error(), c.wantErr) || !errors.Is(err, c.wantErrIs) {
				t.Errorf("Locate(%q): %v, want an error saying %q", c.arg, err, c.wantErr)
			}
			if err != nil && strings.Contains(err.Error(), "hush") {
				t.Errorf("Locate(%q): the error shows the password: %v", c.arg, err)
			}
			continue
		}
		if err != nil || w.File != c.file || w.Server != c.srv {
			t.Errorf("Locate(%q) = %+v, %v", c.arg, w, err)
		}
	}
	os.Chmod(conns, 0o600)
	if w, err := Locate("@secret"); err != nil || w.Server != "postgres://ines:hush@db/p" || w.Name != "secret" {
		t.Errorf("@secret with mode 600: %+v, %v", w, err)
	}
	os.WriteFile(conns, []byte("harbour db.example.org\n"), 0o600)
	if _, err := Locate("@harbour"); err == nil || !strings.Contains(err.Error(), "line 1") {
		t.Errorf("a malformed line: %v", err)
	}
	os.Remove(conns)
	if _, err := Locate("@harbour"); err == nil || !strings.Contains(err.Error(), "no connections file") {
		t.Errorf("no file: %v", err)
	}
}
