package store

import (
	"path/filepath"
	"testing"

	"boxwright/store/storetest"
)

// TestSuite runs the behaviour every backend promises (package storetest)
// against the SQLite file, each case on a new project file.
func TestSuite(t *testing.T) {
	storetest.Run(t, func(t *testing.T) storetest.Backend {
		s, err := Create(filepath.Join(t.TempDir(), "p"+Extension))
		if err != nil {
			t.Fatal(err)
		}
		return s
	})
}
