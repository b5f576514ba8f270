package formats

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf8"

	"boxwright/project"
)

// TestReadPredictionCSVWorked reads a hand-written file. The corners are
// the project.Box convention already, so each record's box is its four
// numbers as written.
func TestReadPredictionCSVWorked(t *testing.T) {
	in := "\xef\xbb\xbfimage,class,x0,y0,x1,y1,score\n" +
		"a.jpg,cat,10,20,40,60,0.9\n" +
		"\n" +
		"sub/b.png, dog , 0.5, 1.5, 2.75, 12.5, 1\n" +
		"\"c,d.jpg\",\"big \"\"red\"\" car\",0,0,640,480,0\n"
	got, err := ReadPredictionCSV(strings.NewReader(in), "preds.csv")
	if err != nil {
		t.Fatal(err)
	}
	want := []Prediction{
		{FileName: "a.jpg", Category: "cat", Box: project.Box{X0: 10, Y0: 20, X1: 40, Y1: 60}, Score: 0.9, Where: "preds.csv:2"},
		{FileName: "sub/b.png", Category: "dog", Box: project.Box{X0: 0.5, Y0: 1.5, X1: 2.75, Y1: 12.5}, Score: 1, Where: "preds.csv:4"},
		{FileName: "c,d.jpg", Category: `big "red" car`, Box: project.Box{X0: 0, Y0: 0, X1: 640, Y1: 480}, Score: 0, Where: "preds.csv:5"},
	}
	if len(got) != len(want) {
		t.Fatalf("got %d predictions, want %d: %+v", len(got), len(want), got)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("record %d = %+v, want %+v", i, got[i], want[i])
		}
	}
}

// TestReadPredictionCSVColumnOrder checks that the header, not the
// position, says which column is which.
func TestReadPredictionCSVColumnOrder(t *testing.T) {
	in := "score,y1,x1,y0,x0,class,image\n0.5,60,40,20,10,cat,a.jpg\n"
	got, err := ReadPredictionCSV(strings.NewReader(in), "p.csv")
	if err != nil {
		t.Fatal(err)
	}
	want := Prediction{FileName: "a.jpg", Category: "cat", Box: project.Box{X0: 10, Y0: 20, X1: 40, Y1: 60}, Score: 0.5, Where: "p.csv:2"}
	if len(got) != 1 || got[0] != want {
		t.Fatalf("got %+v, want %+v", got, want)
	}
}

// TestReadPredictionCSVErrors checks every refusal and its position.
func TestReadPredictionCSVErrors(t *testing.T) {
	const head = "image,class,x0,y0,x1,y1,score\n"
	const ok = "a.jpg,cat,10,20,40,60,0.9\n"
	cases := []struct {
		name, in string
		line     int
		field    string
		msg      string // part of the message
	}{
		{"empty file", "", 0, "", "empty"},
		{"no header", ok, 1, "", `column 1 of the header is "a.jpg"`},
		{"extra column", "image,class,x0,y0,x1,y1,score,label\n", 1, "", `"label"`},
		{"missing column", "image,class,x0,y0,x1,y1\n", 1, "", `lacks the column "score"`},
		{"duplicate column", "image,class,x0,y0,x1,y1,x0\n", 1, "", `"x0" twice`},
		{"too few columns", head + ok + "a.jpg,cat,1,2,3\n", 3, "", "found 5 columns, want 7"},
		{"too many columns", head + "a.jpg,cat,1,2,3,4,0.5,9\n", 2, "", "found 8 columns"},
		{"empty image", head + ok + ok + " ,cat,1,2,3,4,0.5\n", 4, "image", "is empty"},
		{"empty class", head + "a.jpg,,1,2,3,4,0.5\n", 2, "class", "is empty"},
		{"not a number", head + "a.jpg,cat,ten,2,3,4,0.5\n", 2, "x0", `"ten" is not a number`},
		{"empty number", head + "a.jpg,cat,1,,3,4,0.5\n", 2, "y0", "is empty"},
		{"NaN", head + "a.jpg,cat,1,2,NaN,4,0.5\n", 2, "x1", `"NaN" is not a finite number`},
		{"Inf", head + "a.jpg,cat,1,2,3,-Inf,0.5\n", 2, "y1", `"-Inf" is not a finite number`},
		{"overflow", head + "a.jpg,cat,1e999,2,3,4,0.5\n", 2, "x0", "not a finite number"},
		{"NaN score", head + "a.jpg,cat,1,2,3,4,nan\n", 2, "score", "not a finite number"},
		{"x1 not greater", head + ok + ok + ok + ok + ok + ok + ok + ok + ok + ok + ok + ok + ok + ok + ok + "a.jpg,cat,40,2,12,4,0.5\n", 17, "x1", "12 is not greater than x0 40"},
		{"x1 equal", head + "a.jpg,cat,5,2,5,4,0.5\n", 2, "x1", "5 is not greater than x0 5"},
		{"y1 not greater", head + "a.jpg,cat,1,9,3,4,0.5\n", 2, "y1", "4 is not greater than y0 9"},
		{"score above 1", head + "a.jpg,cat,1,2,3,4,1.01\n", 2, "score", "1.01 is outside 0..1"},
		{"score below 0", head + "a.jpg,cat,1,2,3,4,-0.1\n", 2, "score", "-0.1 is outside 0..1"},
		{"bare quote", head + "a\"b.jpg,cat,1,2,3,4,0.5\n", 2, "", "malformed CSV"},
		{"blank lines keep numbering", head + "\n\n" + "a.jpg,cat,1,2,3,4,2\n", 4, "score", "outside 0..1"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := ReadPredictionCSV(strings.NewReader(c.in), "preds.csv")
			if err == nil {
				t.Fatalf("accepted: %+v", got)
			}
			var pe *PositionError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v is %T, not *PositionError", err, err)
			}
			if pe.File != "preds.csv" || pe.Line != c.line || pe.Field != c.field {
				t.Errorf("error %q at line %d field %q, want line %d field %q", err, pe.Line, pe.Field, c.line, c.field)
			}
			if !strings.Contains(err.Error(), c.msg) {
				t.Errorf("error %q does not say %q", err, c.msg)
			}
			if got != nil {
				t.Errorf("returned predictions with the error: %+v", got)
			}
		})
	}
	// The message as a person reads it.
	_, err := ReadPredictionCSV(strings.NewReader(cases[15].in), "preds.csv")
	if want := "preds.csv:17: x1: 12 is not greater than x0 40"; err == nil || err.Error() != want {
		t.Errorf("error = %v, want %q", err, want)
	}
}

// TestPredictionCSVRoundTrip writes invented predictions to a file and
// reads them back exactly.
func TestPredictionCSVRoundTrip(t *testing.T) {
	preds := []Prediction{
		{FileName: "a.jpg", Category: "cat", Box: project.Box{X0: 10, Y0: 20, X1: 40, Y1: 60}, Score: 0.9},
		{FileName: "sub dir/b,2.png", Category: `say "hi"`, Box: project.Box{X0: 0.1, Y0: 1.0 / 3, X1: 2.75, Y1: 1e6}, Score: 1},
		{FileName: "c.jpg", Category: "cat", Box: project.Box{X0: -5, Y0: -1e-9, X1: math.Nextafter(-5, 0), Y1: 0}, Score: 0},
	}
	path := filepath.Join(t.TempDir(), "preds.csv")
	var buf bytes.Buffer
	if err := WritePredictionCSV(&buf, preds); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	got, err := ReadPredictionCSV(f, "preds.csv")
	if err != nil {
		t.Fatalf("%v\n%s", err, buf.String())
	}
	if len(got) != len(preds) {
		t.Fatalf("read %d predictions, wrote %d", len(got), len(preds))
	}
	for i, p := range preds {
		p.Where = "preds.csv:" + string(rune('2'+i))
		if got[i] != p {
			t.Errorf("record %d = %+v, want %+v", i, got[i], p)
		}
	}
}

// TestWritePredictionCSVRefuses checks that the writer does not produce a
// file the reader would refuse.
func TestWritePredictionCSVRefuses(t *testing.T) {
	good := Prediction{FileName: "a.jpg", Category: "cat", Box: project.Box{X0: 0, Y0: 0, X1: 1, Y1: 1}, Score: 0.5}
	bad := []func(p *Prediction){
		func(p *Prediction) { p.FileName = "" },
		func(p *Prediction) { p.FileName = " a.jpg" },
		func(p *Prediction) { p.Category = "" },
		func(p *Prediction) { p.Box.X1 = p.Box.X0 },
		func(p *Prediction) { p.Box.Y0 = math.NaN() },
		func(p *Prediction) { p.Score = 1.5 },
		func(p *Prediction) { p.Score = math.NaN() },
	}
	for i, mod := range bad {
		p := good
		mod(&p)
		if err := WritePredictionCSV(&bytes.Buffer{}, []Prediction{good, p}); err == nil {
			t.Errorf("case %d: wrote %+v", i, p)
		}
	}
}

// FuzzReadPredictionCSV checks that the reader never panics; that every
// error is a *PositionError naming the file and a line of it; and that
// every record it accepts is usable (names within MaxNameBytes and UTF-8,
// a valid box, a score within 0..1) and writes and reads back exactly.
func FuzzReadPredictionCSV(f *testing.F) {
	f.Add([]byte("image,class,x0,y0,x1,y1,score\na.jpg,cat,1,2,3,4,0.5\n"))
	f.Add([]byte("score,image,class,x0,y0,x1,y1\r\n1,\"x\ny\",c,0,0,1e-300,1e300\r\n"))
	// The text checks.
	f.Add([]byte("\x00image"))
	f.Add([]byte("\xef\xbb\xbfimage,class,x0,y0,x1,y1,score\n\"caf\xe9\",cat,1,2,3,4,0.5\n"))
	f.Add([]byte("image,class,x0,y0,x1,y1,score\n\n\n\" a, \"\"b\"\" \", c ,1,2,3,4,1\na,b,1,2,3,4,0\x00\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		preds, err := ReadPredictionCSV(bytes.NewReader(data), "f.csv")
		if err != nil {
			checkFuzzError(t, err, "f.csv", data, 0)
			return
		}
		for _, p := range preds {
			if !p.Box.Valid() || !(p.Box.X1 > p.Box.X0) || !(p.Box.Y1 > p.Box.Y0) || !(p.Score >= 0 && p.Score <= 1) || p.FileName == "" || p.Category == "" ||
				len(p.FileName) > MaxNameBytes || len(p.Category) > MaxNameBytes || !utf8.ValidString(p.FileName+p.Category) || strings.ContainsRune(p.FileName+p.Category, 0) {
				t.Fatalf("accepted %+v", p)
			}
		}
		var out bytes.Buffer
		if err := WritePredictionCSV(&out, preds); err != nil {
			t.Fatalf("read but cannot write: %v", err)
		}
		again, err := ReadPredictionCSV(&out, "again.csv")
		if err != nil || len(again) != len(preds) {
			t.Fatalf("our own output: %d predictions, %v\n%s", len(again), err, out.String())
		}
		for i, p := range preds {
			g := again[i]
			if g.FileName != p.FileName || g.Category != p.Category || g.Box != p.Box || g.Score != p.Score {
				t.Fatalf("prediction %+v came back as %+v", p, g)
			}
		}
	})
}
