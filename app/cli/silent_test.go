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

// Choices that used to be made without a word now follow a stated rule.
func TestSilentChoicesAreStated(t *testing.T) {
	path := testkit.SmallDemo(t)
	dir := t.TempDir()
	var ims []struct {
		Path          string
		Width, Height int
	}
	json.Unmarshal([]byte(mustCLI(t, "images", path, "--json")), &ims)

	// --nms: 0 is refused (it reads as "off" but would drop every box that
	// touches another); "off" turns suppression off.
	preds := filepath.Join(dir, "p.json")
	os.WriteFile(preds, []byte(fmt.Sprintf(`[{"file_name":%q,"category":"buoy","bbox":[1,1,20,20],"score":0.9},
		{"file_name":%q,"category":"buoy","bbox":[15,15,20,20],"score":0.8}]`, ims[0].Path, ims[0].Path)), 0o644)
	if code, _, errs := cli(t, "suggestions", "import", path, preds, "--source", "m", "--nms", "0"); code != 2 || !strings.Contains(errs, "off") {
		t.Errorf("--nms 0: exit %d, %q; want a usage error pointing at off", code, errs)
	}
	mustCLI(t, "suggestions", "import", path, preds, "--source", "m", "--nms", "off")

	// A prediction repeated exactly is kept, and said (evaluation would
	// count the copy as a false positive).
	twice := filepath.Join(dir, "twice.json")
	os.WriteFile(twice, []byte(fmt.Sprintf(`[{"file_name":%q,"category":"buoy","bbox":[1,1,20,20],"score":0.9},
		{"file_name":%q,"category":"buoy","bbox":[1,1,20,20],"score":0.9}]`, ims[0].Path, ims[0].Path)), 0o644)
	if code, _, errs := cli(t, "suggestions", "import", path, twice, "--source", "m2"); code != 0 || !strings.Contains(errs, "1 prediction repeat") {
		t.Errorf("an exact repeat: exit %d, stderr %q; want a warning", code, errs)
	}

	// An empty prediction list would delete the source's pending
	// suggestions: refused.
	empty := filepath.Join(dir, "empty.json")
	os.WriteFile(empty, []byte(`[]`), 0o644)
	if code, _, errs := cli(t, "suggestions", "import", path, empty, "--source", "m"); code != 1 || !strings.Contains(errs, "2 pending") {
		t.Errorf("empty prediction list: exit %d, %q", code, errs)
	}

	// The same labels imported twice: refused, then replaced or appended
	// on request.
	labels := filepath.Join(dir, "omar.json")
	os.WriteFile(labels, []byte(fmt.Sprintf(`{"images":[{"id":1,"file_name":%q,"width":%d,"height":%d}],"categories":[{"id":1,"name":"buoy"}],
		"annotations":[{"id":1,"image_id":1,"category_id":1,"bbox":[1,1,9,9]},{"id":2,"image_id":1,"category_id":1,"bbox":[30,30,9,9]}]}`,
		ims[0].Path, ims[0].Width, ims[0].Height)), 0o644)
	mustCLI(t, "import", path, "--layout", "json", "--annotator", "Omar", labels)
	code, _, errs := cli(t, "import", path, "--layout", "json", "--annotator", "Omar", labels)
	if code != 1 || !strings.Contains(errs, "2 of the file's boxes") || !strings.Contains(errs, "--again replace") {
		t.Errorf("importing the same file twice: exit %d, %q", code, errs)
	}
	noBareKind(t, errs)
	omar := func() int {
		var r struct {
			Annotators []struct {
				Name   string
				Labels int
			}
		}
		json.Unmarshal([]byte(mustCLI(t, "info", path, "--json")), &r)
		for _, a := range r.Annotators {
			if a.Name == "Omar" {
				return a.Labels
			}
		}
		return -1
	}
	if n := omar(); n != 2 {
		t.Fatalf("Omar has %d labels after the refused import, want 2", n)
	}
	if out := mustCLI(t, "import", path, "--layout", "json", "--annotator", "Omar", "--again", "replace", labels); !strings.Contains(out, "replaced 2 labels") {
		t.Errorf("--again replace: %q", out)
	}
	if n := omar(); n != 2 {
		t.Errorf("after --again replace Omar has %d labels, want 2", n)
	}
	mustCLI(t, "import", path, "--layout", "json", "--annotator", "Omar", "--again", "append", labels)
	if n := omar(); n != 4 {
		t.Errorf("after --again append Omar has %d labels, want 4", n)
	}

	// consensus does not replace labels someone imported under its name.
	mustCLI(t, "import", path, "--layout", "json", "--annotator", "consensus", labels)
	code, _, errs = cli(t, "consensus", path, "--annotators", "Ines,Tomas")
	if code != 1 || !strings.Contains(errs, "did not make") || !strings.Contains(errs, "rename") {
		t.Errorf("consensus over imported labels: exit %d, %q", code, errs)
	}
}
