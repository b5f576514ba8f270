package ops

import (
	"context"
	"errors"
	"fmt"
	"image/color"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"sort"
	"strings"
	"testing"

	"boxwright/app/backend"
	"boxwright/assets/demo"
	"boxwright/project"
	"boxwright/project/agree"
	"boxwright/store/postgres"
	"boxwright/store/postgres/pgtest"
)

// copyServer is a private PostgreSQL server with role olga (who may make
// roles, as a project's maker must) and a database factory.
type copyServer struct {
	srv *pgtest.Server
	n   int
}

func startCopyServer(t *testing.T) *copyServer {
	t.Helper()
	t.Setenv("XDG_CACHE_HOME", t.TempDir()) // fetched image bytes really come from the server
	srv := pgtest.Start(t)
	srv.Exec(t, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	return &copyServer{srv: srv}
}

// database makes an empty database owned by olga and returns its URL.
func (c *copyServer) database(t *testing.T) string {
	t.Helper()
	c.n++
	name := fmt.Sprintf("copy%d", c.n)
	c.srv.Exec(t, "postgres", "CREATE DATABASE "+name+" OWNER olga")
	return c.srv.URL("olga", "olga-pw", name)
}

// richDemo is the demo with every kind of thing a copy must carry:
// suggestions accepted, corrected, rejected and left pending, an accepted
// label edited after its review, one deleted after it, imported labels
// with a source and score, a class with a colour of its own and the hot
// key another class gave up,
// a status set back to new, and two models (the older current).
func richDemo(t *testing.T) string {
	t.Helper()
	ctx := context.Background()
	dir := t.TempDir()
	if err := MakeDemo(ctx, dir, demo.Config{Seed: 5, Images: 6, Width: 320, Height: 240}, nil); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, DemoProjectName)
	s, err := backend.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ines, _ := s.AnnotatorByName(ctx, "Ines")
	tomas, _ := s.AnnotatorByName(ctx, "Tomas")
	// The first class loses its key and the new one takes it: a copy
	// that let the store give the first class a free key would clash.
	first, _ := s.ClassByName(ctx, "sailboat")
	key := first.HotKey
	first.HotKey = ""
	if err := s.UpdateClass(ctx, first); err != nil {
		t.Fatal(err)
	}
	buoy, err := s.AddClass(ctx, project.Class{Name: "mooring", Color: color.NRGBA{R: 10, G: 200, B: 30, A: 255}, HotKey: key})
	if err != nil {
		t.Fatal(err)
	}
	gs, _ := s.Suggestions(ctx, project.SuggestionFilter{})
	if len(gs) < 8 {
		t.Fatalf("the demo has only %d suggestions", len(gs))
	}
	sort.Slice(gs, func(i, j int) bool { return gs[i].ID < gs[j].ID })
	must := func(err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
	}
	// Tomas reviews first so that the label order interleaves reviewers.
	moved := gs[2].Box
	moved.X1 -= 3
	made, err := s.Decide(ctx, tomas.ID, []project.Decision{{SuggestionID: gs[2].ID, Accept: true, Box: moved}, {SuggestionID: gs[3].ID}})
	must(err)
	// Labels not from suggestions between decisions.
	must(s.AddLabels(ctx, []project.Label{
		{ImageID: gs[0].ImageID, ClassID: buoy.ID, AnnotatorID: ines.ID, Box: project.Box{X0: 5, Y0: 5, X1: 25, Y1: 30}, Origin: project.OriginImported, Source: "buoys.json", Score: 0.75},
		{ImageID: gs[1].ImageID, ClassID: buoy.ID, AnnotatorID: tomas.ID, Box: project.Box{X0: 50, Y0: 40, X1: 61.5, Y1: 52}, Origin: project.OriginDrawn},
	}))
	made2, err := s.Decide(ctx, ines.ID, []project.Decision{
		{SuggestionID: gs[0].ID, Accept: true},
		{SuggestionID: gs[1].ID, Accept: true, ClassID: buoy.ID},
		{SuggestionID: gs[4].ID, Accept: true},
		{SuggestionID: gs[5].ID, Accept: true},
		{SuggestionID: gs[6].ID},
	})
	must(err)
	// gs[0]'s label (accepted) and gs[2]'s (corrected) moved after
	// review, gs[4]'s (accepted) and gs[7]'s (corrected) deleted.
	shrunk := gs[7].Box
	shrunk.Y1 -= 4
	made3, err := s.Decide(ctx, ines.ID, []project.Decision{{SuggestionID: gs[7].ID, Accept: true, Box: shrunk}})
	must(err)
	edited, err := s.Label(ctx, made2[gs[0].ID])
	must(err)
	edited.Box.X0 += 2
	edited2, err := s.Label(ctx, made[gs[2].ID])
	must(err)
	edited2.Box.Y0 += 1.5
	_, err = s.ApplyLabelChange(ctx, project.LabelChange{Update: []project.Label{edited, edited2}, Delete: []int64{made2[gs[4].ID], made3[gs[7].ID]}})
	must(err)
	ims, _ := s.Images(ctx)
	must(s.SetImageStatus(ctx, ims[len(ims)-1].ID, ines.ID, project.StatusNew, 0))
	must(s.SetImageStatus(ctx, ims[len(ims)-1].ID, tomas.ID, project.StatusSkipped, 0))
	for i, name := range []string{"trained-1", "trained-2"} {
		_, err := s.AddModel(ctx, project.Model{Name: name, Architecture: "tiny-v1", Classes: []string{"sailboat", "mooring"}, InputSize: 320,
			TrainedOn: "Ines, 6 images", Seed: uint64(i + 3), Epochs: []project.Epoch{{Epoch: 1, Loss: 2.5, ValAP50: 0.25, Seconds: 1.5}},
			ValAP50: 0.25 + float64(i)/10, Weights: []byte(fmt.Sprintf("weights of model %d \x00\xff", i))})
		must(err)
	}
	must(s.SetCurrentModel(ctx, "trained-1"))
	return path
}

// snapshot is everything of a project a copy must keep, by names and
// image digests instead of IDs.
type snapshot struct {
	Classes     []string
	Annotators  []string
	Images      []string
	Statuses    map[string]map[string]project.ImageStatus
	Labels      []string
	Suggestions []string
	Models      []string
	Agreement   string
}

func takeSnapshot(t *testing.T, path string) snapshot {
	t.Helper()
	ctx := context.Background()
	s, err := backend.OpenForReading(path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	var sn snapshot
	cs, _ := s.Classes(ctx)
	className := map[int64]string{}
	for _, c := range cs {
		className[c.ID] = c.Name
		sn.Classes = append(sn.Classes, fmt.Sprintf("%s %v %q", c.Name, c.Color, c.HotKey))
	}
	as, _ := s.Annotators(ctx)
	annName := map[int64]string{}
	for _, a := range as {
		annName[a.ID] = a.Name
		sn.Annotators = append(sn.Annotators, a.Name)
	}
	ims, _ := s.Images(ctx)
	sum := map[int64]string{}
	for _, im := range ims {
		sum[im.ID] = im.SHA256[:12]
		sn.Images = append(sn.Images, fmt.Sprintf("%s %s %dx%d o%d", filepath.Base(im.Path), im.SHA256, im.Width, im.Height, im.Orientation))
	}
	sn.Statuses = map[string]map[string]project.ImageStatus{}
	for _, a := range as {
		fo, _ := s.ImagesFor(ctx, a.ID)
		sn.Statuses[a.Name] = map[string]project.ImageStatus{}
		for _, im := range fo {
			sn.Statuses[a.Name][sum[im.ID]] = im.Status
		}
	}
	gs, _ := s.Suggestions(ctx, project.SuggestionFilter{})
	sugKey := map[int64]string{}
	for _, g := range gs {
		sugKey[g.ID] = fmt.Sprintf("%s %s %v %g %s", sum[g.ImageID], className[g.ClassID], g.Box, g.Score, g.Source)
	}
	ls, _ := s.Labels(ctx, project.LabelFilter{})
	for _, l := range ls {
		sn.Labels = append(sn.Labels, fmt.Sprintf("%s %s %s %v %s %q %g from[%s]", sum[l.ImageID], className[l.ClassID], annName[l.AnnotatorID],
			l.Box, l.Origin, l.Source, l.Score, sugKey[l.SuggestionID]))
	}
	for _, g := range gs {
		sn.Suggestions = append(sn.Suggestions, fmt.Sprintf("%s %s by %q label=%v iou=%.12f", sugKey[g.ID], g.State, annName[g.ReviewerID], g.LabelID != 0, g.FinalIoU))
	}
	ms, _ := s.Models(ctx)
	for _, m := range ms {
		full, err := s.Model(ctx, m.Name)
		if err != nil {
			t.Fatal(err)
		}
		sn.Models = append(sn.Models, fmt.Sprintf("%s %s %v %d %q %d %v %g current=%v %q", full.Name, full.Architecture, full.Classes, full.InputSize,
			full.TrainedOn, full.Seed, full.Epochs, full.ValAP50, full.Current, full.Weights))
	}
	for _, xs := range [][]string{sn.Labels, sn.Suggestions, sn.Images} {
		sort.Strings(xs)
	}
	// The agreement of the two annotators, as `boxwright agree` computes
	// it (LoadAgreement, then agree.Compare).
	d, err := LoadAgreement(ctx, s, []string{"Ines", "Tomas"})
	if err != nil {
		t.Fatal(err)
	}
	rep, err := agree.Compare(d.Images, len(d.Annotators), agree.Options{Threshold: 0.5, Classes: d.ClassOrder()}, nil)
	if err != nil {
		t.Fatal(err)
	}
	// Image names are paths, which differ by where each copy keeps the
	// files: compare them by base name.
	sn.Agreement = regexp.MustCompile(`Name:\S*/`).ReplaceAllString(fmt.Sprintf("%+v", rep), "Name:")
	return sn
}

func sameSnapshot(t *testing.T, what string, a, b snapshot) {
	t.Helper()
	va, vb := reflect.ValueOf(a), reflect.ValueOf(b)
	for i := range va.NumField() {
		if !reflect.DeepEqual(va.Field(i).Interface(), vb.Field(i).Interface()) {
			t.Errorf("%s: %s differ:\noriginal %v\ncopy     %v", what, va.Type().Field(i).Name, va.Field(i).Interface(), vb.Field(i).Interface())
		}
	}
}

func copyInto(t *testing.T, from, to string) (CopyReport, []string) {
	t.Helper()
	src, err := backend.OpenForReading(from)
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	var stages []string
	rep, err := CopyTo(context.Background(), src, to, CopyOptions{Progress: func(stage string, done, total int) {
		if done == total {
			stages = append(stages, stage)
		}
	}})
	if err != nil {
		t.Fatalf("copy %s to %s: %v", from, to, err)
	}
	return rep, stages
}

// The demo with review decisions, edits and models copied file → server
// → file, and file → file, keeps every class, annotator, status, label
// (box, class, origin, source, score, link to its suggestion), suggestion
// (state, reviewer, final IoU), model and the agreement figures.
func TestCopyRoundTrip(t *testing.T) {
	pg := startCopyServer(t)
	orig := richDemo(t)
	before := takeSnapshot(t, orig)
	if len(before.Models) != 2 || !strings.Contains(strings.Join(before.Suggestions, "\n"), "corrected") {
		t.Fatalf("the fixture lacks what it should test: %+v", before)
	}

	url := pg.database(t)
	rep, stages := copyInto(t, orig, url)
	if rep.Images != 6 || rep.Models != 2 || rep.Decided != 8 {
		t.Errorf("report to the server: %+v", rep)
	}
	for _, st := range []string{CopyStageClasses, CopyStageImages, CopyStageSuggestions, CopyStageLabels, CopyStageModels} {
		if !strings.Contains(strings.Join(stages, " "), st) {
			t.Errorf("no progress of stage %s (got %v)", st, stages)
		}
	}
	sameSnapshot(t, "file → server", before, takeSnapshot(t, url))

	back := filepath.Join(t.TempDir(), "snapshot.boxw")
	rep, _ = copyInto(t, url, back)
	if rep.ImageDir != filepath.Join(filepath.Dir(back), "snapshot-images") {
		t.Errorf("image folder %q", rep.ImageDir)
	}
	sameSnapshot(t, "server → file", before, takeSnapshot(t, back))
	s, err := backend.Open(back)
	if err != nil {
		t.Fatal(err)
	}
	ims, _ := s.Images(context.Background())
	if len(ims) == 0 || !strings.HasPrefix(ims[0].Path, "snapshot-images/images/") {
		t.Errorf("image paths in the snapshot: %+v", ims)
	}
	if missing, _ := s.MissingImages(context.Background()); len(missing) != 0 {
		t.Errorf("the snapshot's images are missing: %v", missing)
	}
	s.Close()

	again := filepath.Join(t.TempDir(), "again.boxw")
	copyInto(t, back, again)
	sameSnapshot(t, "file → file", before, takeSnapshot(t, again))

	url2 := pg.database(t)
	copyInto(t, url, url2)
	sameSnapshot(t, "server → server", before, takeSnapshot(t, url2))
	sameSnapshot(t, "the original after being copied", before, takeSnapshot(t, orig))
}

// A copy that fails half-way leaves no target file and no image folder,
// and a server project that is empty again (or, when it cannot be
// emptied, refused by Open as unfinished); the original is unchanged.
func TestCopyFailureLeavesNothing(t *testing.T) {
	pg := startCopyServer(t)
	orig := richDemo(t)
	before := takeSnapshot(t, orig)

	// Cancelled at the first progress of a stage.
	cancelAt := func(stage, from, target string) error {
		src, err := backend.OpenForReading(from)
		if err != nil {
			t.Fatal(err)
		}
		defer src.Close()
		ctx, cancel := context.WithCancel(context.Background())
		defer cancel()
		_, err = CopyTo(ctx, src, target, CopyOptions{Progress: func(st string, done, total int) {
			if st == stage {
				cancel()
			}
		}})
		return err
	}
	for _, stage := range []string{CopyStageImages, CopyStageLabels} {
		dir := t.TempDir()
		target := filepath.Join(dir, "copy.boxw")
		if err := cancelAt(stage, orig, target); !errors.Is(err, context.Canceled) {
			t.Fatalf("a copy to a file cancelled at %s: %v", stage, err)
		}
		if entries, _ := os.ReadDir(dir); len(entries) != 0 {
			t.Errorf("a copy cancelled at %s left %v in the target's folder", stage, entries)
		}
		url := pg.database(t)
		err := cancelAt(stage, orig, url)
		if !errors.Is(err, context.Canceled) || !strings.Contains(err.Error(), "dropped again") {
			t.Fatalf("a copy to a server cancelled at %s: %v", stage, err)
		}
		if p, err := backend.Open(url); err == nil || !strings.Contains(err.Error(), "holds no Boxwright project") {
			if p != nil {
				p.Close()
			}
			t.Errorf("the server project after a failed copy: %v", err)
		}
		// The emptied database takes a copy again.
		copyInto(t, orig, url)
		sameSnapshot(t, "copy after a failed one", before, takeSnapshot(t, url))

		// From the server to a file: neither the file nor the folder
		// of image files it was writing stays.
		dir = t.TempDir()
		if err := cancelAt(stage, url, filepath.Join(dir, "back.boxw")); !errors.Is(err, context.Canceled) {
			t.Fatalf("a copy from the server cancelled at %s: %v", stage, err)
		}
		if entries, _ := os.ReadDir(dir); len(entries) != 0 {
			t.Errorf("a copy from the server cancelled at %s left %v", stage, entries)
		}
	}

	// A server project whose copy could not even be emptied (the program
	// was killed) stays marked, and Open says so.
	url2 := pg.database(t)
	dst, err := backend.Create(url2)
	if err != nil {
		t.Fatal(err)
	}
	if err := dst.(CopyMarker).MarkCopying(context.Background(), orig); err != nil {
		t.Fatal(err)
	}
	dst.Close()
	if p, err := backend.Open(url2); !errors.Is(err, postgres.ErrUnfinishedCopy) || !strings.Contains(err.Error(), "boxwright copy again") {
		if p != nil {
			p.Close()
		}
		t.Errorf("open of a project whose copy was cut off: %v", err)
	}
	sameSnapshot(t, "the original after failed copies", before, takeSnapshot(t, orig))
}

// A target that exists, and a source whose image files are gone, are
// refused before anything is written.
func TestCopyRefusals(t *testing.T) {
	orig := richDemo(t)
	src, err := backend.OpenForReading(orig)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	taken := filepath.Join(dir, "taken.boxw")
	os.WriteFile(taken, []byte("someone's file"), 0o644)
	if _, err := CopyTo(context.Background(), src, taken, CopyOptions{}); err == nil || !strings.Contains(err.Error(), "already exists") {
		t.Errorf("a copy onto an existing file: %v", err)
	}
	if b, _ := os.ReadFile(taken); string(b) != "someone's file" {
		t.Error("the existing file was changed")
	}
	src.Close()

	ims, _ := filepath.Glob(filepath.Join(filepath.Dir(orig), "images", "*"))
	os.Remove(ims[1])
	src, err = backend.OpenForReading(orig)
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	target := filepath.Join(dir, "copy.boxw")
	_, err = CopyTo(context.Background(), src, target, CopyOptions{})
	if err == nil || !strings.Contains(err.Error(), "boxwright relink") || !strings.Contains(err.Error(), filepath.Base(ims[1])) {
		t.Errorf("a copy of a project with a missing image: %v", err)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Errorf("a refused copy wrote %v", entries)
	}
}
