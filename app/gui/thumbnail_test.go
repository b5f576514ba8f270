package gui

import (
	"context"
	"os"
	"path/filepath"
	"testing"

	"fyne.io/fyne/v2/test"

	"boxwright/project"
	"boxwright/store"
	"boxwright/store/imagefile"
)

// oneBigJPEGProject makes a project holding one 4000×3000 JPEG.
func oneBigJPEGProject(tb testing.TB) (*store.Store, project.Image) {
	tb.Helper()
	dir := tb.TempDir()
	imgDir := filepath.Join(dir, "images")
	if err := os.MkdirAll(imgDir, 0o755); err != nil {
		tb.Fatal(err)
	}
	benchJPEGs(tb, imgDir, 1)
	st, err := store.Create(filepath.Join(dir, "one"+store.Extension))
	if err != nil {
		tb.Fatal(err)
	}
	tb.Cleanup(func() { st.Close() })
	ctx := context.Background()
	if rep, err := st.AddImages(ctx, []string{imgDir}, project.IntakeOptions{}); err != nil || rep.Added != 1 {
		tb.Fatalf("adding the image: %+v, %v", rep, err)
	}
	ims, err := st.Images(ctx)
	if err != nil {
		tb.Fatal(err)
	}
	return st, ims[0]
}

// A list thumbnail made from a DCT-scaled decode has the thumbnail's size
// and looks like the one made from the full image: mean difference per
// channel under 2 of 255 (a 1/8 decode averages each 8×8 block exactly,
// as the downscale would; common practice).
func TestThumbnailFromScaledDecode(t *testing.T) {
	st, im := oneBigJPEGProject(t)
	u := newUI(test.NewTempApp(t))
	got, err := u.nav.thumbSource(st, im)()
	if err != nil {
		t.Fatal(err)
	}
	if b := got.Bounds(); b.Dx() >= im.Width || b.Dx() < thumbSide || b.Dy() < thumbSide {
		t.Errorf("decoded for the thumbnail at %v of %d×%d", b, im.Width, im.Height)
	}
	path, _ := st.FetchImage(context.Background(), im)
	full, _, err := imagefile.Decode(path, imagefile.DefaultMaxPixels)
	if err != nil {
		t.Fatal(err)
	}
	a, b := imagefile.Thumbnail(got, thumbSide), imagefile.Thumbnail(full, thumbSide)
	if a.Bounds() != b.Bounds() || a.Bounds().Dx() != thumbSide {
		t.Fatalf("thumbnails %v and %v, want %d px wide", a.Bounds(), b.Bounds(), thumbSide)
	}
	var sum, n float64
	for y := a.Bounds().Min.Y; y < a.Bounds().Max.Y; y++ {
		for x := a.Bounds().Min.X; x < a.Bounds().Max.X; x++ {
			r1, g1, b1, _ := a.At(x, y).RGBA()
			r2, g2, b2, _ := b.At(x, y).RGBA()
			for _, d := range []int{int(r1>>8) - int(r2>>8), int(g1>>8) - int(g2>>8), int(b1>>8) - int(b2>>8)} {
				sum += float64(max(d, -d))
				n++
			}
		}
	}
	if mean := sum / n; mean >= 2 {
		t.Errorf("thumbnails differ by %.2f per channel on average", mean)
	}
}

// BenchmarkThumbnail12MP: the image-list thumbnail of a 12 MP JPEG made
// from its file, as the list does, and from a full-size decode (as before,
// less the hash Decode also made).
func BenchmarkThumbnail12MP(b *testing.B) {
	st, im := oneBigJPEGProject(b)
	u := newUI(test.NewTempApp(b))
	path, _ := st.FetchImage(context.Background(), im)
	b.Run("list", func(b *testing.B) {
		for b.Loop() {
			img, err := u.nav.thumbSource(st, im)()
			if err != nil {
				b.Fatal(err)
			}
			imagefile.Thumbnail(img, thumbSide)
		}
	})
	b.Run("full-decode", func(b *testing.B) {
		for b.Loop() {
			img, _, err := imagefile.DecodeAtLeast(path, imagefile.DefaultMaxPixels, 0, 0)
			if err != nil {
				b.Fatal(err)
			}
			imagefile.Thumbnail(img, thumbSide)
		}
	})
}
