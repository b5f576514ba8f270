package gui

import (
	"bytes"
	"context"
	"encoding/json"
	"path/filepath"
	"slices"
	"testing"

	"boxwright/app/cli"
	"boxwright/app/ops"
	"boxwright/assets/demo"
)

// openDemoWith opens a demo of the given configuration as Ines.
func openDemoWith(t *testing.T, cfg demo.Config) (*ui, string) {
	t.Helper()
	dir := t.TempDir()
	if err := ops.MakeDemo(context.Background(), dir, cfg, nil); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, ops.DemoProjectName)
	return openPathAs(t, path, "Ines"), path
}

// compareNow runs the agreement window's comparison and waits for it.
func compareNow(t *testing.T, s *agreeScreen) {
	t.Helper()
	computeAndWait(t, "the comparison did not finish", &s.done, s.compute)
}

// The Images tab lists the images in the order of the command line's
// "most disputed images" (boxwright agree --json, worst_images): the
// command line is the reference. The demo's 40 images have ties in the
// number of disagreements, so a different tie rule shows.
func TestAgreementImagesInCommandLineOrder(t *testing.T) {
	u, path := openDemoWith(t, demo.Config{Seed: 1, Images: 40, Width: 320, Height: 240})
	u.showAgreement()
	s := u.agree
	compareNow(t, s)

	var out, errs bytes.Buffer
	if rc := cli.Run([]string{"agree", path, "--annotators", "Ines,Tomas", "--json", "--worst", "0"}, &out, &errs, nil); rc != 0 {
		t.Fatalf("boxwright agree: %d %s", rc, errs.String())
	}
	var rep struct {
		Worst []struct {
			Image string `json:"image"`
		} `json:"worst_images"`
	}
	if err := json.Unmarshal(out.Bytes(), &rep); err != nil {
		t.Fatal(err)
	}
	var want, got []string
	for _, w := range rep.Worst {
		want = append(want, w.Image)
	}
	for _, r := range s.images.Order() {
		got = append(got, s.images.rows[r][0])
	}
	if len(want) < 10 {
		t.Fatalf("the command line lists only %d images", len(want))
	}
	if !slices.Equal(got, want) {
		t.Errorf("the Images tab's order differs from the command line's:\n gui %v\n cli %v", got, want)
	}
}
