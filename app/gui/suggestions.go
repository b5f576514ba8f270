package gui

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/storage"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"boxwright/app/ops"
	"boxwright/suggest"
)

// defaultDialogNMS is the IoU the import dialog proposes for non-maximum
// suppression (common practice for detector outputs).
const defaultDialogNMS = 0.6

// askImportSuggestions brings a model's predictions in: the form, then,
// when the file names classes the project lacks, what to do with each.
func (u *ui) askImportSuggestions() {
	if !u.haveProject() {
		return
	}
	path := widget.NewEntry()
	path.SetPlaceHolder("predictions file (.json, .csv) or folder of .txt files")
	browse := widget.NewButtonWithIcon("", theme.FolderOpenIcon(), func() {
		d := dialog.NewFileOpen(func(r fyne.URIReadCloser, err error) {
			if err == nil && r != nil {
				r.Close()
				path.SetText(r.URI().Path())
			}
		}, u.win)
		d.SetFilter(storage.NewExtensionFileFilter([]string{".json", ".csv", ".txt"}))
		prepareFileDialog(d, u.win, "Choose a predictions file", "Choose")
		d.Show()
	})
	source := widget.NewEntry()
	source.SetPlaceHolder("model name and version, e.g. detector-v7")
	layout := widget.NewSelect([]string{"from the file name", "json", "txt", "csv"}, nil)
	layout.SetSelected("from the file name")
	minScore := widget.NewEntry()
	minScore.SetText("0")
	useNMS := widget.NewCheck("Non-maximum suppression per class at IoU", nil)
	nms := widget.NewEntry()
	nms.SetText(strconv.FormatFloat(defaultDialogNMS, 'g', -1, 64))
	form := dialog.NewForm("Import predictions", "Import", "Cancel", []*widget.FormItem{
		widget.NewFormItem("File", container.NewBorder(nil, nil, nil, browse, path)),
		widget.NewFormItem("Source", source),
		widget.NewFormItem("Layout", layout),
		widget.NewFormItem("Minimum score", minScore),
		widget.NewFormItem("", container.NewBorder(nil, nil, useNMS, nil, nms)),
		widget.NewFormItem("", widget.NewLabel("Importing a source again replaces its still-pending suggestions; reviewed ones stay.")),
	}, func(ok bool) {
		if !ok {
			return
		}
		j, err := u.suggestionForm(path.Text, source.Text, layout.Selected, minScore.Text, useNMS.Checked, nms.Text)
		if err != nil {
			u.showError(err)
			return
		}
		u.probeAndImport(j)
	}, u.win)
	form.Resize(fyne.NewSize(620, 420))
	form.Show()
}

// suggestionForm checks the dialog's fields and makes the job.
func (u *ui) suggestionForm(path, source, layout, minScore string, useNMS bool, nms string) (ops.SuggestionJob, error) {
	var j ops.SuggestionJob
	path, source = strings.TrimSpace(path), strings.TrimSpace(source)
	if path == "" {
		return j, fmt.Errorf("choose the predictions file")
	}
	if source == "" {
		source = strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
	}
	j.Path, j.Source = path, source
	if layout == "from the file name" {
		j.Layout = ops.LayoutFromPath(path)
	} else {
		l, err := suggest.ParsePredictionLayout(layout)
		if err != nil {
			return j, err
		}
		j.Layout = l
	}
	ms, err := strconv.ParseFloat(strings.TrimSpace(minScore), 64)
	if err != nil || ms < 0 || ms > 1 {
		return j, fmt.Errorf("the minimum score must be a number from 0 to 1, not %q", minScore)
	}
	j.Filter.MinScore = ms
	if useNMS {
		v, err := strconv.ParseFloat(strings.TrimSpace(nms), 64)
		if err != nil || v <= 0 || v > 1 {
			return j, fmt.Errorf("the NMS IoU must be a number above 0 and at most 1, not %q", nms)
		}
		j.Filter.NMS = v
	}
	return j, nil
}

// probeAndImport reads the file once to find unknown classes, asks about
// them, then imports.
func (u *ui) probeAndImport(j ops.SuggestionJob) {
	st := u.st
	var unknown map[string]int
	probe := j
	probe.Probe = func(m map[string]int) { unknown = m }
	u.runJob("Reading predictions", func(ctx context.Context, progress func(float64)) error {
		_, err := ops.RunSuggestionImport(ctx, st, probe, func(done, total int) { progress(float64(done) / float64(total)) })
		return err
	}, func() {
		if len(unknown) == 0 {
			u.importSuggestions(j)
			return
		}
		u.askUnknownClasses(j, unknown)
	})
}

// askUnknownClasses asks, for each class the file names and the project
// lacks, whether to create it, map it to a project class or drop it.
func (u *ui) askUnknownClasses(j ops.SuggestionJob, unknown map[string]int) {
	labels := map[string]string{}
	for n, c := range unknown {
		labels[n] = fmt.Sprintf("%s (%d boxes)", n, c)
	}
	u.askClassRules("Import", labels, func(r ops.UnknownClassRule) {
		j.Unknown = r
		u.importSuggestions(j)
	}, nil)
}

// askClassRules asks what to do with each class name the project lacks
// (labels: name → how to show it): create it, drop its boxes or map it to
// a project class; then calls use with the rules chosen, or cancelled
// (when set) if the person cancels.
func (u *ui) askClassRules(confirm string, labels map[string]string, use func(ops.UnknownClassRule), cancelled func()) {
	names := make([]string, 0, len(labels))
	for n := range labels {
		names = append(names, n)
	}
	sort.Strings(names)
	choices := []string{"create it", "drop its boxes"}
	for _, c := range u.classes {
		choices = append(choices, "map to "+c.Name)
	}
	var items []*widget.FormItem
	sel := map[string]*widget.Select{}
	for _, n := range names {
		s := widget.NewSelect(choices, nil)
		s.SetSelected("create it")
		sel[n] = s
		items = append(items, widget.NewFormItem(labels[n], s))
	}
	d := dialog.NewForm("Classes the project does not have", confirm, "Cancel", items, func(ok bool) {
		if !ok {
			if cancelled != nil {
				cancelled()
			}
			return
		}
		r := ops.UnknownClassRule{Map: map[string]string{}, CreateNames: map[string]bool{}, DropNames: map[string]bool{}}
		for n, s := range sel {
			switch {
			case s.Selected == "create it":
				r.CreateNames[n] = true
			case s.Selected == "drop its boxes":
				r.DropNames[n] = true
			default:
				r.Map[n] = strings.TrimPrefix(s.Selected, "map to ")
			}
		}
		use(r)
	}, u.win)
	d.Resize(fyne.NewSize(520, 160+50*float32(len(names))))
	d.Show()
}

// showNewSuggestions reads the project again after suggestions were
// stored and shows the current image's.
func (u *ui) showNewSuggestions() {
	if err := u.reload(); err != nil {
		u.showError(err)
	}
	u.loadSuggestions()
	u.refreshBoxes()
}

func (u *ui) importSuggestions(j ops.SuggestionJob) {
	st := u.st
	var res ops.SuggestionResult
	u.runJob("Importing predictions", func(ctx context.Context, progress func(float64)) error {
		var err error
		res, err = ops.RunSuggestionImport(ctx, st, j, func(done, total int) { progress(float64(done) / float64(total)) })
		return err
	}, func() {
		u.showNewSuggestions()
		msg := fmt.Sprintf("Source %s: %d read, %d added as pending suggestions.\n%d below the minimum score, %d suppressed by NMS, %d of unknown classes dropped, %d clipped to their image.\nReplaced %d still pending from an earlier import; kept %d already reviewed.",
			res.Source, res.Read, res.Added, res.BelowScore, res.Suppressed, res.Dropped, res.Clipped, res.ReplacedPending, res.KeptReviewed)
		if len(res.ClassesCreated) > 0 {
			msg += "\nNew classes: " + strings.Join(res.ClassesCreated, ", ")
		}
		dialog.ShowInformation("Import predictions", msg, u.win)
	})
}

// showSuggestionStats shows what the decisions so far say about each
// source: counts per class, the reliability chart and a score threshold.
func (u *ui) showSuggestionStats() {
	if !u.haveProject() {
		return
	}
	if sw := u.newStatsWindow(); sw != nil {
		sw.win.Show()
	}
}

// statsWindow is the window of what the decisions tell us; table and
// chart are nil when there are no suggestions.
type statsWindow struct {
	win     fyne.Window
	table   *sortTable
	chart   *chartView
	summary *widget.Label
}

// newStatsWindow makes the statistics window, not yet shown; nil after a
// failure it has reported.
func (u *ui) newStatsWindow() *statsWindow {
	stats, names, err := ops.CollectReviewStats(context.Background(), u.st, "")
	if err != nil {
		u.showError(err)
		return nil
	}
	w := u.app.NewWindow("Boxwright — what the decisions tell us")
	if len(stats) == 0 {
		w.SetContent(withClose(w, container.NewCenter(widget.NewLabel("No suggestions yet: Suggestions ▸ Import predictions…"))))
		w.Resize(fyne.NewSize(500, 200))
		return &statsWindow{win: w}
	}
	var opts []string
	for _, s := range stats {
		opts = append(opts, s.Source)
	}
	table := newSortTable([]string{"class", "in", "accepted", "corrected", "rejected", "pending", "mean IoU of corrections"}, nil)
	chart := newChartView(fyne.NewSize(400, 300))
	summary := widget.NewLabel("")
	summary.Wrapping = fyne.TextWrapWord
	var split *container.Split
	var binsNow []suggest.Bin
	show := func(i int) {
		s := stats[i]
		var rows [][]string
		var keys [][]float64
		for _, c := range s.Summary {
			rows = append(rows, []string{names[c.ClassID], strconv.Itoa(c.In), strconv.Itoa(c.Accepted), strconv.Itoa(c.Corrected),
				strconv.Itoa(c.Rejected), strconv.Itoa(c.Pending), ops.F4(c.MeanCorrectedIoU)})
			keys = append(keys, []float64{math.NaN(), float64(c.In), float64(c.Accepted), float64(c.Corrected), float64(c.Rejected), float64(c.Pending), c.MeanCorrectedIoU})
		}
		table.SetRows(rows, keys)
		if split != nil {
			split.Refresh() // the table's width may have changed
		}
		summary.SetText(s.ThresholdAdvice())
		binsNow = s.Reliability
		source, bins := s.Source, s.Reliability
		chart.SetChart(func(st ops.ChartStyle) (*plot.Plot, error) { return reliabilityPlotStyled(st, source, bins) })
	}
	pick := widget.NewSelect(opts, func(string) {})
	pick.OnChanged = func(string) { show(pick.SelectedIndex()) }
	saveChart := widget.NewButtonWithIcon("Save chart as PNG…", theme.DocumentSaveIcon(), func() {
		askSavePlot(w, chart.Plot(), "reliability.png", "Pick a source first.")
	})
	saveBins := widget.NewButtonWithIcon("Save bins as CSV…", theme.DocumentSaveIcon(), func() {
		bt := newSortTable([]string{"score_from", "score_to", "decided", "kept", "kept_rate"}, nil)
		var rows [][]string
		for _, b := range binsNow {
			rows = append(rows, []string{ops.CSVNum(b.Lo), ops.CSVNum(b.Hi), strconv.Itoa(b.Decided), strconv.Itoa(b.Kept), ops.CSVNum(b.Rate)})
		}
		bt.SetRows(rows, nil)
		askSaveCSV(w, bt, "reliability.csv")
	})
	saveTable := widget.NewButtonWithIcon("Save table as CSV…", theme.DocumentSaveIcon(), func() { askSaveCSV(w, table, "decisions.csv") })
	top := container.NewVBox(container.NewBorder(nil, nil, widget.NewLabel("Source"), nil, pick), summary)
	right := container.NewBorder(nil, container.NewHBox(saveChart, saveBins), nil, nil, chart)
	// The table keeps the width of all its columns; the chart takes the rest.
	left := container.New(atLeastWidth{func() float32 { return table.FullWidth() + theme.Size(theme.SizeNameScrollBar) }},
		container.NewBorder(nil, saveTable, nil, nil, table.Object()))
	split = container.NewHSplit(left, right)
	split.Offset = 0.55
	w.SetContent(withClose(w, container.NewBorder(container.NewPadded(top), nil, nil, nil, split)))
	pick.SetSelectedIndex(0)
	// Wide enough for the whole table beside a readable chart.
	w.Resize(w.Content().MinSize().Max(fyne.NewSize(1100, 640)))
	return &statsWindow{win: w, table: table, chart: chart, summary: summary}
}

// reliabilityPlot draws the share of decided suggestions kept per score
// bin, with the number of decisions on each bar.
func reliabilityPlot(source string, bins []suggest.Bin) (*plot.Plot, error) {
	return reliabilityPlotStyled(chartStyle(), source, bins)
}

// reliabilityPlotStyled is reliabilityPlot in a chart style.
func reliabilityPlotStyled(st ops.ChartStyle, source string, bins []suggest.Bin) (*plot.Plot, error) {
	p := st.NewPlot()
	p.Title.Text = "Share kept by score" // the source is chosen above the chart
	p.Add(st.Grid())                     // under the data
	p.X.Label.Text = "score"
	p.Y.Label.Text = "share kept (accepted or corrected)"
	p.Y.Min, p.Y.Max = 0, 1
	p.X.Min, p.X.Max = 0, 1
	var xys plotter.XYs
	var labels []string
	for _, b := range bins {
		if b.Decided == 0 || math.IsNaN(b.Rate) {
			continue
		}
		xys = append(xys, plotter.XY{X: (b.Lo + b.Hi) / 2, Y: b.Rate})
		labels = append(labels, strconv.Itoa(b.Decided))
	}
	if len(xys) == 0 {
		return p, nil
	}
	line, points, err := plotterLinePoints(xys)
	if err != nil {
		return nil, err
	}
	line.Color, points.Color = st.Accent(), st.Accent()
	p.Add(line, points)
	lab, err := plotter.NewLabels(plotter.XYLabels{XYs: xys, Labels: labels})
	if err == nil {
		for i := range lab.TextStyle {
			lab.TextStyle[i] = st.TextStyle(0.9, false)
		}
		lab.Offset = vg.Point{X: vg.Points(4), Y: vg.Points(4)}
		p.Add(lab)
	}
	// The share the suggested threshold promises, as a dashed guide.
	target, err := plotter.NewLine(plotter.XYs{{X: 0, Y: ops.KeepRate}, {X: 1, Y: ops.KeepRate}})
	if err == nil {
		target.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		target.Color = st.Foreground
		p.Add(target)
		p.Legend.Add(fmt.Sprintf("%.0f %% kept", 100*ops.KeepRate), target)
		p.Legend.Top, p.Legend.Left = true, true // the points rise to the right
	}
	return p, nil
}

func plotterLinePoints(xys plotter.XYs) (*plotter.Line, *plotter.Scatter, error) {
	l, err := plotter.NewLine(xys)
	if err != nil {
		return nil, nil, err
	}
	s, err := plotter.NewScatter(xys)
	if err != nil {
		return nil, nil, err
	}
	return l, s, nil
}

// atLeastWidth lays its objects over each other at least w() wide.
type atLeastWidth struct{ w func() float32 }

func (l atLeastWidth) Layout(objs []fyne.CanvasObject, size fyne.Size) {
	for _, o := range objs {
		o.Move(fyne.Position{})
		o.Resize(size)
	}
}

func (l atLeastWidth) MinSize(objs []fyne.CanvasObject) fyne.Size {
	var m fyne.Size
	for _, o := range objs {
		m = m.Max(o.MinSize())
	}
	m.Width = max(m.Width, l.w())
	return m
}
