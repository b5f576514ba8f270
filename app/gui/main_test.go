package gui

import (
	"os"
	"testing"

	"boxwright/suggest/onnx/onnxtest"
)

func TestMain(m *testing.M) {
	backgroundThumbnails = false // see its comment; TestThumbnailsAreMade turns it on
	code := m.Run()
	onnxtest.Cleanup()
	os.Exit(code)
}

// The image list gets its thumbnails in the background.
func TestThumbnailsAreMade(t *testing.T) {
	backgroundThumbnails = true
	defer func() { backgroundThumbnails = false }()
	u, _ := openDemoAs(t, "Ines")
	u.nav.list.Refresh() // asks for the rows on screen
	waitFor(t, "thumbnails of the rows on screen", func() bool {
		u.nav.mu.Lock()
		defer u.nav.mu.Unlock()
		return len(u.nav.thumbs) > 0
	})
}
