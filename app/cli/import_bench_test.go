package cli

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"boxwright/project"
	"boxwright/project/formats"
	"boxwright/store"
)

// importChildEnv carries the command line of the benchmark's child.
const importChildEnv = "BOXWRIGHT_BENCH_IMPORT_CHILD"

// TestImportCommandChild is the child process of BenchmarkImportCommand200k:
// with importChildEnv set it runs that command line and exits with its
// status; otherwise it does nothing.
func TestImportCommandChild(t *testing.T) {
	a := os.Getenv(importChildEnv)
	if a == "" {
		return
	}
	var args []string
	if err := json.Unmarshal([]byte(a), &args); err != nil {
		os.Exit(3)
	}
	code := Run(args, os.Stdout, os.Stderr, noWindow)
	// The peak resident size of this process since it started (Linux's
	// VmHWM): getrusage's ru_maxrss of a child also counts the parent's
	// memory that the child shared between fork and exec.
	if status, err := os.ReadFile("/proc/self/status"); err == nil {
		for _, line := range strings.Split(string(status), "\n") {
			if v, ok := strings.CutPrefix(line, "VmHWM:"); ok {
				fmt.Fprintf(os.Stderr, "%s %s\n", importChildPeak, strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(v), "kB")))
			}
		}
	}
	os.Exit(code)
}

// importChildPeak starts the line where the child tells its peak
// resident size in KiB.
const importChildPeak = "boxwright-bench-peak-rss-kib:"

// benchImportInputs makes, in dir, a project of 10,000 images with the
// four classes (prepared.boxw) and a corner/size JSON file of 20 boxes on
// each image (labels.json).
func benchImportInputs(b *testing.B, dir string) (prepared, labels string) {
	b.Helper()
	classes := []string{"sailboat", "motorboat", "buoy", "kayak"}
	prepared = filepath.Join(dir, "prepared.boxw")
	st, err := store.Create(prepared)
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	for _, c := range classes {
		if _, err := st.AddClass(ctx, project.Class{Name: c}); err != nil {
			b.Fatal(err)
		}
	}
	ds := &formats.Dataset{Classes: classes}
	tx, err := st.DB().Begin()
	if err != nil {
		b.Fatal(err)
	}
	for i := 0; i < 10000; i++ {
		name := fmt.Sprintf("img/%05d.jpg", i)
		if _, err := tx.Exec("INSERT INTO images(path, sha256, width, height, orientation, status, added_at) VALUES (?,?,1280,960,1,'new','2026-01-01T00:00:00Z')",
			name, fmt.Sprintf("%064x", i+1)); err != nil {
			b.Fatal(err)
		}
		rec := formats.ImageRecord{Name: name, Width: 1280, Height: 960}
		for k := 0; k < 20; k++ {
			x, y := float64((i*37+k*53)%1200), float64((i*11+k*29)%900)
			rec.Boxes = append(rec.Boxes, formats.BoxRecord{Class: classes[k%4], Box: project.Box{X0: x, Y0: y, X1: x + 40.5, Y1: y + 30.25}})
		}
		ds.Images = append(ds.Images, rec)
	}
	if err := tx.Commit(); err != nil {
		b.Fatal(err)
	}
	if err := st.Close(); err != nil {
		b.Fatal(err)
	}
	var file bytes.Buffer
	if err := formats.WriteCornerJSON(&file, ds); err != nil {
		b.Fatal(err)
	}
	labels = filepath.Join(dir, "labels.json")
	if err := os.WriteFile(labels, file.Bytes(), 0o644); err != nil {
		b.Fatal(err)
	}
	return prepared, labels
}

func copyFile(b *testing.B, from, to string) {
	b.Helper()
	data, err := os.ReadFile(from)
	if err != nil {
		b.Fatal(err)
	}
	if err := os.WriteFile(to, data, 0o644); err != nil {
		b.Fatal(err)
	}
}

// BenchmarkImportCommand200k runs the real "import" command, in a child
// process (this test binary again), on 200,000 boxes of corner/size JSON
// into a project that holds their 10,000 images: opening the project,
// reading the file, matching, inserting, committing and closing. Each
// run gets a fresh copy of the project; making the inputs and copying are
// outside the timing. MiB-peak-rss is the largest resident size a child
// reached (its VmHWM), cpu-s/op its user and system time:
// on a shared machine a steadier figure than the wall time.
//
// With BENCH_DATA set, it writes there what store/compare_import.sh
// needs: the prepared project (project.boxw), the label rows the command
// stored, every column, as CSV (rows.csv), and the SQL that makes the
// annotator they belong to (prelude.sql).
func BenchmarkImportCommand200k(b *testing.B) {
	dir := b.TempDir()
	prepared, labels := benchImportInputs(b, dir)
	if out := os.Getenv("BENCH_DATA"); out != "" {
		writeImportBenchData(b, prepared, labels, out)
	}
	var peak int64
	var cpu time.Duration
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		path := filepath.Join(dir, fmt.Sprintf("run%d.boxw", i))
		copyFile(b, prepared, path)
		args, _ := json.Marshal([]string{"import", path, "--layout", "json", "--annotator", "bench", labels})
		cmd := exec.Command(os.Args[0], "-test.run=^TestImportCommandChild$")
		cmd.Env = append(os.Environ(), importChildEnv+"="+string(args))
		var stdout, stderr bytes.Buffer
		cmd.Stdout, cmd.Stderr = &stdout, &stderr
		b.StartTimer()
		err := cmd.Run()
		b.StopTimer()
		if err != nil || !strings.Contains(stdout.String(), "imported 200000 labels on 10000 images") {
			b.Fatalf("import: %v\n%s%s", err, stdout.String(), stderr.String())
		}
		kib := int64(-1)
		for _, line := range strings.Split(stderr.String(), "\n") {
			if v, ok := strings.CutPrefix(line, importChildPeak+" "); ok {
				kib, _ = strconv.ParseInt(v, 10, 64)
			}
		}
		if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok && kib < 0 {
			kib = ru.Maxrss // an upper bound where /proc is missing
		}
		peak = max(peak, kib)
		cpu += cmd.ProcessState.UserTime() + cmd.ProcessState.SystemTime()
		os.Remove(path)
		b.StartTimer()
	}
	b.ReportMetric(float64(peak)/1024, "MiB-peak-rss")
	b.ReportMetric(cpu.Seconds()/float64(b.N), "cpu-s/op")
}

// writeImportBenchData imports labels into a copy of the prepared project
// and writes what the reference needs into out.
func writeImportBenchData(b *testing.B, prepared, labels, out string) {
	b.Helper()
	copyFile(b, prepared, filepath.Join(out, "project.boxw"))
	path := filepath.Join(b.TempDir(), "reference.boxw")
	copyFile(b, prepared, path)
	if code := Run([]string{"import", path, "--layout", "json", "--annotator", "bench", labels}, io.Discard, os.Stderr, noWindow); code != 0 {
		b.Fatalf("import for BENCH_DATA: exit %d", code)
	}
	st, err := store.OpenReadOnly(path)
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	db := st.DB()
	var annID int64
	var annName, annCreated string
	if err := db.QueryRow("SELECT id, name, created_at FROM annotators").Scan(&annID, &annName, &annCreated); err != nil {
		b.Fatal(err)
	}
	prelude := fmt.Sprintf("INSERT INTO annotators(id, name, created_at) VALUES (%d, '%s', '%s');\n", annID,
		strings.ReplaceAll(annName, "'", "''"), strings.ReplaceAll(annCreated, "'", "''"))
	if err := os.WriteFile(filepath.Join(out, "prelude.sql"), []byte(prelude), 0o644); err != nil {
		b.Fatal(err)
	}
	rows, err := db.Query("SELECT id, image_id, class_id, annotator_id, x0, y0, x1, y1, origin, source, score, suggestion_id, created_at, updated_at FROM labels ORDER BY id")
	if err != nil {
		b.Fatal(err)
	}
	defer rows.Close()
	var csv []byte
	n := 0
	for rows.Next() {
		var id, img, cls, ann int64
		var x0, y0, x1, y1, score float64
		var origin, source, created, updated string
		var sug sql.NullInt64
		if err := rows.Scan(&id, &img, &cls, &ann, &x0, &y0, &x1, &y1, &origin, &source, &score, &sug, &created, &updated); err != nil {
			b.Fatal(err)
		}
		if sug.Valid || strings.ContainsAny(origin+source+created+updated, ",\"\n") {
			b.Fatalf("label %d does not fit the plain CSV the reference reads", id)
		}
		for _, v := range []int64{id, img, cls, ann} {
			csv = strconv.AppendInt(csv, v, 10)
			csv = append(csv, ',')
		}
		for _, v := range []float64{x0, y0, x1, y1} {
			csv = strconv.AppendFloat(csv, v, 'g', -1, 64)
			csv = append(csv, ',')
		}
		csv = append(csv, origin+","+source+","...)
		csv = strconv.AppendFloat(csv, score, 'g', -1, 64)
		// suggestion_id is NULL; the sqlite3 tool stores an empty field
		// as '' (see compare_import.sh).
		csv = append(csv, ",,"+created+","+updated+"\n"...)
		n++
	}
	if err := rows.Err(); err != nil || n != 200000 {
		b.Fatalf("%d label rows, %v", n, err)
	}
	if err := os.WriteFile(filepath.Join(out, "rows.csv"), csv, 0o644); err != nil {
		b.Fatal(err)
	}
}
