package cli

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/app/internal/testkit"
)

// classNames lists the project's classes in their order.
func classNames(t *testing.T, path string) string {
	t.Helper()
	return strings.TrimSpace(mustCLI(t, "classes", path, "list"))
}

// classes add is all or nothing: a name that exists, is given twice or is
// not a valid name stops the command before any class is stored.
func TestClassesAddAllOrNothing(t *testing.T) {
	path := filepath.Join(t.TempDir(), "p.boxw")
	mustCLI(t, "new", path)
	mustCLI(t, "classes", path, "add", "buoy")
	before := classNames(t, path)
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"x", "x"}, 2, `class "x" is given twice`},
		{[]string{"kayak", "buoy"}, 1, `class "buoy" already exists`},
		{[]string{"kayak", ""}, 2, "class name is empty"},
	} {
		code, _, errs := cli(t, append([]string{"classes", path, "add"}, c.args...)...)
		if code != c.code || !strings.Contains(errs, c.want) || !strings.Contains(errs, "no class was added") {
			t.Errorf("classes add %q: exit %d, %q; want %d and %q", c.args, code, errs, c.code, c.want)
		}
		if got := classNames(t, path); got != before {
			t.Errorf("classes add %q stored something: %q, was %q", c.args, got, before)
		}
	}
}

// Renaming onto an existing name and deleting a class in use say so in
// plain words: no SQL, no internal ids, no bare error kind, "1 label".
func TestClassesMessages(t *testing.T) {
	path := filepath.Join(t.TempDir(), "p.boxw")
	mustCLI(t, "new", path)
	mustCLI(t, "classes", path, "add", "buoy", "kayak")
	code, _, errs := cli(t, "classes", path, "rename", "buoy", "kayak")
	if code != 1 || strings.Contains(errs, "UNIQUE") || !strings.Contains(errs, `class "kayak" exists already`) {
		t.Errorf("rename onto an existing name: exit %d, %q", code, errs)
	}
	noBareKind(t, errs)
	code, _, errs = cli(t, "classes", path, "rename", "buoy", " ")
	if code != 1 || !strings.Contains(errs, `rename class "buoy": class name is empty`) {
		t.Errorf("rename to a blank name: exit %d, %q", code, errs)
	}
}

// relink refuses a folder that is not there or is a file (it used to say
// "relinked 0, still missing 0" and exit 0, as if it had searched), and
// lists the files it skipped, each path once.
func TestRelinkNeedsAFolder(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "p.boxw")
	mustCLI(t, "new", path)
	for _, c := range []struct{ arg, want string }{
		{filepath.Join(dir, "nowhere"), "does not exist"},
		{path, "is not a folder"},
	} {
		code, _, errs := cli(t, "relink", path, c.arg)
		if code != 1 || !strings.Contains(errs, c.arg) || !strings.Contains(errs, c.want) {
			t.Errorf("relink %s: exit %d, %q; want 1 and %q", c.arg, code, errs, c.want)
		}
	}
	bad := writeFile(t, "bad.jpg", "not a picture")
	out := mustCLI(t, "relink", path, filepath.Dir(bad))
	if !strings.Contains(out, "skipped "+bad+": ") || strings.Count(out, bad) != 1 {
		t.Errorf("relink of a folder with a damaged file says %q; want it skipped with its path once", out)
	}
}

// Whole-number flags name their range (the flag package said only "parse
// error"), and train --epochs -1 is refused as out of range instead of
// "give --minutes or --epochs".
func TestWholeNumberFlagsNameTheirRange(t *testing.T) {
	path := filepath.Join(t.TempDir(), "p.boxw")
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"train", path, "--annotator", "A", "--epochs", "-1"}, "-epochs: give a whole number from 1 to 100000"},
		{[]string{"train", path, "--annotator", "A", "--epochs", "NaN"}, "-epochs: give a whole number from 1 to 100000"},
		{[]string{"train", path, "--annotator", "A", "--threads", "-1", "--epochs", "1"}, "-threads: give a whole number from 0 to 1024"},
		{[]string{"train", path, "--annotator", "A", "--seed", "-1", "--epochs", "1"}, "-seed: give a whole number from 0 to 18446744073709551615"},
		{[]string{"detect", path, "--threads", "x"}, "-threads: give a whole number from 0 to 1024"},
		{[]string{"export", path, "--layout", "json", "--annotator", "A", "--out", "o", "--seed", "1e3"}, "-seed: give a whole number from -9223372036854775808"},
		{[]string{"demo", filepath.Join(t.TempDir(), "d"), "--no-open", "--seed", "x"}, "-seed: give a whole number"},
		{[]string{"demo", filepath.Join(t.TempDir(), "d"), "--no-open", "--images", "0"}, "-images: give a whole number from 1 to 100000"},
	} {
		code, _, errs := cli(t, c.args...)
		if code != 2 || !strings.Contains(errs, c.want) || strings.Contains(errs, "parse error") {
			t.Errorf("%q: exit %d, %q; want 2 and %q", c.args, code, errs, c.want)
		}
	}
}

// Counts of one read "1 label", "1 image", "1 box", never "1 labels".
func TestCountsOfOneAreSingular(t *testing.T) {
	path := testkit.SmallDemo(t)
	var ims []struct {
		Path          string
		Width, Height int
	}
	if err := json.Unmarshal([]byte(mustCLI(t, "images", path, "--json")), &ims); err != nil {
		t.Fatal(err)
	}
	// One box, running over the right edge so that it is clipped.
	labels := writeFile(t, "one.json", fmt.Sprintf(`{"images":[{"id":1,"file_name":%q,"width":%d,"height":%d}],
		"categories":[{"id":1,"name":"buoy"}],"annotations":[{"id":1,"image_id":1,"category_id":1,"bbox":[%d,1,20,9]}]}`,
		ims[0].Path, ims[0].Width, ims[0].Height, ims[0].Width-10))
	out := mustCLI(t, "import", path, "--layout", "json", "--annotator", "Uma", labels)
	if !strings.Contains(out, "imported 1 label on 1 image") || !strings.Contains(out, "clipped 1 box ") {
		t.Errorf("import of one clipped box says %q", out)
	}
	preds := writeFile(t, "one-pred.json", fmt.Sprintf(`[{"file_name":%q,"category":"buoy","bbox":[1,1,20,20],"score":0.9}]`, ims[0].Path))
	if out := mustCLI(t, "suggestions", "import", path, preds, "--source", "m"); !strings.Contains(out, "added 1 pending suggestion;") {
		t.Errorf("suggestions import of one prediction says %q", out)
	}
	out = mustCLI(t, "info", path)
	if !strings.Contains(out, "1 label;") || strings.Contains(out, " 1 labels") {
		t.Errorf("info with an annotator of one label says %q", out)
	}
}

// Messages say each thing once and end in what to do: no "w: w 1.5", no
// "eval: eval:", no "class "x": class "x"", no bare "not found".
func TestMessagesNameThingsOnce(t *testing.T) {
	path := testkit.SmallDemo(t)
	labels := filepath.Join(t.TempDir(), "labels")
	mustCLI(t, "export", path, "--layout", "txt", "--annotator", "Ines", "--out", labels, "--images", "none")
	var one string
	if m, _ := filepath.Glob(filepath.Join(labels, "*", "labels", "*.txt")); len(m) > 0 {
		one = m[0]
	} else {
		t.Fatal("the export wrote no label file")
	}
	if err := appendLine(one, "0 0.5 0.5 1.5 0.1"); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"import", path, "--layout", "txt", "--annotator", "Zed", "--classes", filepath.Join(labels, "classes.txt"), filepath.Dir(one)}, 1, ": w: 1.5 is outside 0..1"},
		{[]string{"eval", path, "--truth", "Ines", "--source", "x", "--interpolation", "7"}, 2, `eval: --interpolation "7": give all, 11, 101 or step`},
		{[]string{"eval", path, "--truth", "Ines", "--source", "x", "--protocol", "x"}, 2, `eval: --protocol "x": give voc or coco`},
		{[]string{"eval", path, "--truth", "Nobody", "--source", "x"}, 1, `ground truth (--truth): annotator "Nobody": not found; the project's annotators are "Ines", "Tomas"`},
		{[]string{"images", path, "--annotator", "ines"}, 1, `annotator "ines": not found; the project's annotators are "Ines", "Tomas"`},
		{[]string{"similar", path, "--image", "harbour-001.jpg", "--exemplar", "1,1,9,9", "--class", "zzz", "--save"}, 1, `similar: --class: class "zzz": not found`},
		{[]string{"similar", path, "--image", "harbour-001.jpg", "--exemplar", "NaN,1,9,9"}, 2, `"NaN" is not a finite number`},
		{[]string{"detect", path}, 1, "the project has no current model: train one first (boxwright train)"},
		{[]string{"detect", path, "--model", "nosuch"}, 1, `the project has no model "nosuch" (boxwright models lists the ones it has)`},
		{[]string{"models", path, "--use", "nosuch"}, 1, `the project has no model "nosuch" (boxwright models lists the ones it has)`},
	} {
		code, _, errs := cli(t, c.args...)
		if code != c.code || !strings.Contains(errs, c.want) {
			t.Errorf("%q: exit %d, %q; want %d and %q", c.args, code, errs, c.code, c.want)
		}
		if strings.HasSuffix(strings.TrimSpace(errs), ": not found") && !strings.Contains(c.want, "not found") {
			t.Errorf("%q ends in a bare kind: %q", c.args, errs)
		}
	}
}

func appendLine(path, line string) error {
	f, err := os.OpenFile(path, os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		return err
	}
	if _, err := f.WriteString(line + "\n"); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// A text-label folder without a class-names file beside it (or above it)
// says where it looked and to name one with --classes.
func TestTextImportWithoutClassNamesSaysWhatToDo(t *testing.T) {
	path := testkit.SmallDemo(t)
	labels := filepath.Join(t.TempDir(), "labels")
	if err := os.MkdirAll(labels, 0o755); err != nil {
		t.Fatal(err)
	}
	code, _, errs := cli(t, "import", path, "--layout", "txt", "--annotator", "Zed", labels)
	want := "no such file: " + filepath.Join(labels, "classes.txt") + ", nor in the folder above: name the class-names file (--classes FILE)"
	if code != 1 || !strings.Contains(errs, want) {
		t.Errorf("text import without classes.txt: exit %d, %q; want %q", code, errs, want)
	}
}

// One image given two records (by two names in a JSON file, or by two XML
// files) is refused and nothing is stored; it was imported as "2 images".
func TestImportRefusesTwoRecordsOfOneImage(t *testing.T) {
	path := testkit.SmallDemo(t)
	var ims []struct {
		Path          string
		Width, Height int
	}
	if err := json.Unmarshal([]byte(mustCLI(t, "images", path, "--json")), &ims); err != nil {
		t.Fatal(err)
	}
	im := ims[0]
	twoNames := writeFile(t, "two.json", fmt.Sprintf(`{"images":[{"id":1,"file_name":%q,"width":%d,"height":%d},{"id":2,"file_name":%q,"width":%d,"height":%d}],
		"categories":[{"id":1,"name":"buoy"}],"annotations":[{"id":1,"image_id":1,"category_id":1,"bbox":[1,1,9,9]},{"id":2,"image_id":2,"category_id":1,"bbox":[30,30,9,9]}]}`,
		im.Path, im.Width, im.Height, filepath.Base(im.Path), im.Width, im.Height))
	xmlDir := t.TempDir()
	one := fmt.Sprintf(`<annotation><filename>%s</filename><size><width>%d</width><height>%d</height></size>
		<object><name>buoy</name><bndbox><xmin>2</xmin><ymin>2</ymin><xmax>9</xmax><ymax>9</ymax></bndbox></object></annotation>`, im.Path, im.Width, im.Height)
	for _, n := range []string{"a.xml", "b.xml"} {
		if err := os.WriteFile(filepath.Join(xmlDir, n), []byte(one), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	before := mustCLI(t, "info", path)
	for _, c := range [][]string{{"json", twoNames}, {"xml", xmlDir}} {
		code, _, errs := cli(t, "import", path, "--layout", c[0], "--annotator", "Zed", c[1])
		if code != 1 || !strings.Contains(errs, "nothing was stored") || !strings.Contains(errs, "are both the project image") {
			t.Errorf("%s layout, one image twice: exit %d, %q", c[0], code, errs)
		}
		if after := mustCLI(t, "info", path); after != before {
			t.Errorf("%s layout: the failed import changed the project:\n%s\nwas\n%s", c[0], after, before)
		}
	}
}

// A flag that takes one value refuses a second, different one before the
// project is opened (export --annotator Ines --annotator Tomas exported
// Tomas without a word); the same value twice is harmless, and --map
// collects one value per class.
func TestFlagGivenTwice(t *testing.T) {
	path := testkit.SmallDemo(t)
	out := filepath.Join(t.TempDir(), "out")
	for _, args := range [][]string{
		{"export", path, "--layout", "json", "--annotator", "Ines", "--annotator", "Tomas", "--out", out},
		{"consensus", path, "--annotators", "Ines,Tomas", "--iou", "0.5", "--iou=0.9"},
		{"info", path, "--json", "--json=false"},
	} {
		code, _, errs := cli(t, args...)
		if code != 2 || !strings.Contains(errs, "is given twice") || strings.Contains(errs, "invalid value") {
			t.Errorf("%q: exit %d, %q; want 2 and \"is given twice\"", args, code, errs)
		}
	}
	if _, err := os.Stat(out); err == nil {
		t.Error("the refused export wrote its folder")
	}
	mustCLI(t, "agree", path, "--annotators", "Ines,Tomas", "--iou", "0.5", "--iou", "0.5")
	mustCLI(t, "info", path, "--json", "--json")
}

// import --images must name a folder: a file, a pipe or a missing path
// stops the import before the project is touched (they were "skipped 1"
// while the labels went in without their images); a folder's skipped
// files are listed. suggestions import checks --source like detect does.
func TestImportImagesMustBeAFolder(t *testing.T) {
	path := testkit.SmallDemo(t)
	labels := filepath.Join(t.TempDir(), "out")
	mustCLI(t, "export", path, "--layout", "json", "--annotator", "Ines", "--out", labels, "--images", "none")
	files, _ := filepath.Glob(filepath.Join(labels, "*", "annotations.json"))
	if len(files) == 0 {
		t.Fatal("the export wrote no annotations.json")
	}
	before := mustCLI(t, "info", path)
	for _, c := range []struct{ images, want string }{
		{files[0], "is a regular file, not a folder of images (nothing was imported)"},
		{filepath.Join(labels, "nowhere"), "no such folder (nothing was imported)"},
	} {
		code, _, errs := cli(t, "import", path, "--layout", "json", "--annotator", "Zed", "--images", c.images, files[0])
		if code != 1 || !strings.Contains(errs, c.images) || !strings.Contains(errs, c.want) {
			t.Errorf("--images %s: exit %d, %q; want %q", c.images, code, errs, c.want)
		}
	}
	if after := mustCLI(t, "info", path); after != before {
		t.Errorf("a refused import changed the project:\n%s", after)
	}
	pics := filepath.Dir(writeFile(t, "bad.jpg", "not a picture"))
	out := mustCLI(t, "import", path, "--layout", "json", "--annotator", "Zed", "--images", pics, files[0])
	if !strings.Contains(out, "skipped "+filepath.Join(pics, "bad.jpg")+": ") {
		t.Errorf("import --images with a damaged file says %q; want the file listed", out)
	}
	code, _, errs := cli(t, "suggestions", "import", path, files[0], "--source", "a\tb")
	if code != 2 || !strings.Contains(errs, "control character") {
		t.Errorf("--source with a tab: exit %d, %q", code, errs)
	}
}

// similar --save with no match says that nothing was stored (it said
// "stored as pending suggestions", and --json "saved": true).
func TestSimilarSaveWithoutMatches(t *testing.T) {
	path, args := similarArgs(t)
	args = append(args, "--threshold", "1", "--class", "buoy", "--save")
	before := mustCLI(t, "info", path)
	out := mustCLI(t, args...)
	if !strings.HasPrefix(out, "0 matches") {
		t.Skipf("the example matched at a score of 1: %q", out)
	}
	if !strings.Contains(out, "nothing was stored") || strings.Contains(out, "stored as pending") {
		t.Errorf("similar --save without matches says %q", out)
	}
	var rep struct{ Saved bool }
	if err := json.Unmarshal([]byte(mustCLI(t, append(args, "--json")...)), &rep); err != nil || rep.Saved {
		t.Errorf("--json without matches: saved %v (%v)", rep.Saved, err)
	}
	if after := mustCLI(t, "info", path); after != before {
		t.Errorf("similar without matches changed the project:\n%s", after)
	}
}

// A classes usage mistake exits 2 whatever the file: the action is checked
// before the project is opened (a missing project said "no such project
// file", exit 1, for "classes X bogus").
func TestClassesUsageBeforeOpening(t *testing.T) {
	missing := filepath.Join(t.TempDir(), "none.boxw")
	for _, args := range [][]string{{"bogus"}, {"rename", "a"}, {"add"}, {"list", "x"}, {"delete"}} {
		code, _, errs := cli(t, append([]string{"classes", missing}, args...)...)
		if code != 2 || !strings.Contains(errs, "usage:") {
			t.Errorf("classes %q on a missing project: exit %d, %q; want the usage (2)", args, code, errs)
		}
	}
}

// add-images exits 1 when not one of the paths given could be taken (it
// exited 0 with "failed 1"); a partial intake still exits 0.
func TestAddImagesFailsWhenNothingIsTaken(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "p.boxw")
	mustCLI(t, "new", p)
	code, out, errs := cli(t, "add-images", p, filepath.Join(dir, "nonexistent.jpg"))
	if code != 1 || !strings.Contains(errs, "nothing was added") || !strings.Contains(out, "failed 1") {
		t.Errorf("add-images of a missing file: exit %d, stdout %q, stderr %q", code, out, errs)
	}
}
