package formats

import (
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"unicode/utf8"
)

func TestSafeRelPath(t *testing.T) {
	long := strings.Repeat("x", 300)
	longUni := strings.Repeat("é", 150) // 300 bytes
	cases := []struct{ in, want string }{
		{"cat.jpg", "cat.jpg"},
		{"train/cat 01.jpg", "train/cat 01.jpg"},
		{"../../etc/passwd", "etc/passwd"},
		{"/abs/path.jpg", "abs/path.jpg"},
		{`C:\x\y.jpg`, "x/y.jpg"},
		{"c:/x/y.jpg", "x/y.jpg"},
		{`\\server\share\z.png`, "server/share/z.png"},
		{"a/../../b.jpg", "a/b.jpg"},
		{"a\x00b.jpg", "a_b.jpg"},
		{"a\nb\tc\x7f.jpg", "a_b_c_.jpg"},
		{"..", "unnamed"},
		{".", "unnamed"},
		{"", "unnamed"},
		{"///", "unnamed"},
		{"./././x.jpg", "x.jpg"},
		{"a//b", "a/b"},
		{"...", "unnamed"},
		{"x/. ./y", "x/y"},
		{".hidden", ".hidden"},
		{"..hidden", "..hidden"},
		{"name. ", "name"},
		{"  spaced  .jpg", "spaced  .jpg"},
		{"x-a:b*c?d\"e<f>g|h.jpg", "x-a_b_c_d_e_f_g_h.jpg"},
		{"q:rest.jpg", "rest.jpg"}, // a drive letter, even when none was meant
		{"CON", "_CON"},
		{"dir/nul.txt", "dir/_nul.txt"},
		{"com7.jpg", "_com7.jpg"},
		{"console.jpg", "console.jpg"},
		{"bad\xffutf8.jpg", "bad_utf8.jpg"},
		// Letters of any script are kept: friendlier, and valid on every
		// current file system.
		{"写真/猫.jpg", "写真/猫.jpg"},
		{"Übersicht/straße.png", "Übersicht/straße.png"},
		{"cafe\u0301.jpg", "cafe\u0301.jpg"},  // decomposed: e + combining acute
		{"evil\u202egpj.exe", "evil_gpj.exe"}, // right-to-left override
		{"a\u2215b.jpg", "a_b.jpg"},           // division slash, looks like "/"
		{"x／y.jpg", "x_y.jpg"},                // fullwidth solidus
		{long + ".jpeg", strings.Repeat("x", 195) + ".jpeg"},
		{long, strings.Repeat("x", 200)},
		{longUni + ".jpg", strings.Repeat("é", 98) + ".jpg"},
	}
	for _, tc := range cases {
		if got := SafeRelPath(tc.in); got != tc.want {
			t.Errorf("SafeRelPath(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
}

// hostileNames are names a dataset file could carry.
var hostileNames = []string{
	"../../etc/passwd", "/abs/path.jpg", `C:\x\y.jpg`, "a/../../b.jpg",
	"a\x00b.jpg", "..", ".", "", "....", "../", `..\..\win.ini`,
	"a/./../../../../b", strings.Repeat("../", 100) + "x",
	strings.Repeat("ab/", 50) + "deep.jpg", strings.Repeat("y", 5000) + ".png",
	strings.Repeat("猫", 400) + ".jpg", "\xff\xfe\xfd", "nul", "~/x.jpg",
	"$HOME/x", "%APPDATA%\\x", "a\u202e.jpg", " ", "\t", ". .", "a/ /b",
}

func TestSafeRelPathHostileStaysInside(t *testing.T) {
	base := t.TempDir()
	for i, in := range hostileNames {
		// One output folder per name, so earlier files cannot block later ones.
		root := filepath.Join(base, strconv.Itoa(i))
		rel := SafeRelPath(in)
		checkSafeShape(t, in, rel)
		p, err := JoinInside(root, rel)
		if err != nil {
			t.Errorf("SafeRelPath(%q) = %q, which JoinInside rejects: %v", in, rel, err)
			continue
		}
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Errorf("%q: %v", in, err)
			continue
		}
		if err := os.WriteFile(p, []byte("x"), 0o644); err != nil {
			t.Errorf("%q: writing %s: %v", in, p, err)
			continue
		}
		real, err := filepath.EvalSymlinks(p)
		if err != nil {
			t.Errorf("%q: %v", in, err)
			continue
		}
		realRoot, _ := filepath.EvalSymlinks(root)
		if !strings.HasPrefix(real, realRoot+string(filepath.Separator)) {
			t.Errorf("%q: file landed at %s, outside %s", in, real, realRoot)
		}
	}
	// Nothing was written beside the output folders.
	entries, err := os.ReadDir(base)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if _, err := strconv.Atoi(e.Name()); err != nil || !e.IsDir() {
			t.Errorf("unexpected entry %q beside the output folders", e.Name())
		}
	}
	if up, _ := os.ReadDir(filepath.Dir(base)); len(up) != 1 {
		t.Errorf("the folder above holds %d entries, want 1", len(up))
	}
}

// checkSafeShape checks the promises of SafeRelPath on any output.
func checkSafeShape(t *testing.T, in, rel string) {
	t.Helper()
	if rel == "" || !utf8.ValidString(rel) || strings.ContainsAny(rel, "\\\x00:") || strings.HasPrefix(rel, "/") {
		t.Errorf("SafeRelPath(%q) = %q: empty, invalid UTF-8, or forbidden character", in, rel)
	}
	for seg := range strings.SplitSeq(rel, "/") {
		if seg == "" || seg == "." || seg == ".." || len(seg) > maxSegmentBytes {
			t.Errorf("SafeRelPath(%q) = %q: bad segment %q", in, rel, seg)
		}
		for _, r := range seg {
			if r < 0x20 || r == 0x7f {
				t.Errorf("SafeRelPath(%q) = %q: control character", in, rel)
			}
		}
	}
}

func FuzzSafeRelPath(f *testing.F) {
	for _, n := range hostileNames {
		f.Add(n)
	}
	root := f.TempDir()
	f.Fuzz(func(t *testing.T, in string) {
		rel := SafeRelPath(in)
		checkSafeShape(t, in, rel)
		if _, err := JoinInside(root, rel); err != nil {
			t.Errorf("SafeRelPath(%q) = %q: %v", in, rel, err)
		}
		if again := SafeRelPath(rel); again != rel {
			t.Errorf("SafeRelPath is not idempotent: %q → %q → %q", in, rel, again)
		}
	})
}

func TestJoinInside(t *testing.T) {
	root := filepath.Join(t.TempDir(), "out")
	good := []string{"a.jpg", "a/b.jpg", "a/../b.jpg", "..a", "a..", "./a"}
	for _, rel := range good {
		p, err := JoinInside(root, rel)
		if err != nil {
			t.Errorf("JoinInside(%q): %v", rel, err)
		} else if !strings.HasPrefix(p, root+string(filepath.Separator)) {
			t.Errorf("JoinInside(%q) = %q", rel, p)
		}
	}
	bad := []string{"", ".", "a/..", "..", "../x", "a/../../x", "/etc/passwd", "x\x00y", root + "/x"}
	for _, rel := range bad {
		if p, err := JoinInside(root, rel); err == nil {
			t.Errorf("JoinInside(%q) = %q, want an error", rel, p)
		}
	}
	// A sibling that shares the root's name as a prefix is outside.
	if p, err := JoinInside(root, "../out2/x"); err == nil {
		t.Errorf("JoinInside into a sibling folder = %q, want an error", p)
	}
}

func TestUniqueNames(t *testing.T) {
	cases := []struct{ in, want []string }{
		{[]string{"a.jpg", "A.jpg", "a.jpg"}, []string{"a.jpg", "A-2.jpg", "a-3.jpg"}},
		{[]string{"a.jpg", "b.jpg"}, []string{"a.jpg", "b.jpg"}},
		// An original name is never taken by a generated one.
		{[]string{"a.jpg", "a.jpg", "a-2.jpg"}, []string{"a.jpg", "a-3.jpg", "a-2.jpg"}},
		{[]string{"x", "X", "x"}, []string{"x", "X-2", "x-3"}},
		{[]string{".env", ".ENV"}, []string{".env", ".ENV-2"}},
		{[]string{"d.x/a", "D.X/a"}, []string{"d.x/a", "D.X/a-2"}},
		{[]string{"t.tar.gz", "t.tar.gz"}, []string{"t.tar.gz", "t.tar-2.gz"}},
		{[]string{"Straße.png", "STRASSE.png", "straße.PNG"}, []string{"Straße.png", "STRASSE.png", "straße-2.PNG"}},
		{[]string{"ΣΊΣΥΦΟΣ.jpg", "σίσυφος.jpg"}, []string{"ΣΊΣΥΦΟΣ.jpg", "σίσυφος-2.jpg"}},
		{nil, []string{}},
	}
	for _, tc := range cases {
		got := UniqueNames(tc.in)
		if !slices.Equal(got, tc.want) {
			t.Errorf("UniqueNames(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}

	// Many repeats: all distinct ignoring case, and stable.
	var in []string
	for i := range 500 {
		in = append(in, []string{"img.jpg", "IMG.jpg", "img-2.jpg", "Img.JPG"}[i%4])
	}
	got := UniqueNames(in)
	seen := map[string]bool{}
	for _, n := range got {
		k := strings.ToLower(n)
		if seen[k] {
			t.Fatalf("duplicate %q", n)
		}
		seen[k] = true
	}
	if !slices.Equal(got, UniqueNames(in)) {
		t.Error("UniqueNames is not stable")
	}
}
