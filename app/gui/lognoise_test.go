package gui

import (
	"bytes"
	"errors"
	"io"
	"log"
	"testing"

	"fyne.io/fyne/v2"
)

// The toolkit's harmless messages (with their Cause and At lines) are
// dropped; its other errors and everything else still reach the log.
func TestQuietLogDropsToolkitNoise(t *testing.T) {
	var buf bytes.Buffer
	old := log.Writer()
	log.SetOutput(&quietLog{w: &buf})
	defer log.SetOutput(old)
	fyne.LogError("Preferences load error:", io.EOF)
	fyne.LogError("Getting favorite locations", errors.New("folder Videos not found"))
	fyne.LogError("Error parsing user locale C", errors.New("language: tag is not well-formed"))
	log.Println("ours")
	fyne.LogError("Failed to set directory", errors.New("denied"))
	got := buf.String()
	for _, gone := range []string{"Preferences", "EOF", "favorite", "Videos", "locale"} {
		if bytes.Contains([]byte(got), []byte(gone)) {
			t.Errorf("%q still logged:\n%s", gone, got)
		}
	}
	for _, kept := range []string{"ours", "Failed to set directory", "Cause: denied", "At:"} {
		if !bytes.Contains([]byte(got), []byte(kept)) {
			t.Errorf("%q lost:\n%s", kept, got)
		}
	}
}
