package gui

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"

	"boxwright/app/ops"
	"boxwright/project/agree"
)

// Chart sizes in pixels, on screen and when saved.
const (
	chartW, chartH = 640, 480
)

// agreeScreen is the agreement report window.
type agreeScreen struct {
	u   *ui
	win fyne.Window

	who      *widget.CheckGroup
	iou      *widget.Slider
	iouLabel *widget.Label
	aware    *widget.Check
	weights  *widget.Select
	run      *widget.Button
	progress *widget.ProgressBar
	pair     *widget.Select
	headline *widget.Label
	notes    *widget.Label

	conf, hist     *chartView
	pairs, classes *sortTable
	images         *sortTable

	data    ops.AgreementData
	rep     agree.Report
	have    bool
	shown   int // index of the pair on show
	imgRows []agree.ImageAgreement
	cancel  context.CancelFunc
	// done, when set, is called after each comparison (for tests).
	done func(error)
}

// showAgreement opens (or brings forward) the agreement report.
func (u *ui) showAgreement() {
	if !u.haveProject() {
		return
	}
	if u.agree != nil {
		u.agree.win.RequestFocus()
		return
	}
	u.agree = newAgreeScreen(u)
	u.agree.win.Show()
}

func newAgreeScreen(u *ui) *agreeScreen {
	s := &agreeScreen{u: u, win: u.app.NewWindow("Boxwright — annotator agreement")}
	var names []string
	for _, a := range u.annotators {
		if a.Name != ops.ConsensusName {
			names = append(names, a.Name)
		}
	}
	s.who = widget.NewCheckGroup(names, nil)
	s.who.Horizontal = true
	if len(names) >= 2 {
		s.who.SetSelected(names[:2])
	}
	s.iouLabel = widget.NewLabel("")
	s.iou = widget.NewSlider(0.1, 0.95)
	s.iou.Step = 0.05
	s.iou.OnChanged = func(v float64) { s.iouLabel.SetText(fmt.Sprintf("IoU ≥ %.2f", v)) }
	s.iou.SetValue(agree.DefaultThreshold)
	s.aware = widget.NewCheck("Class-aware matching", nil)
	s.weights = widget.NewSelect([]string{"unweighted", "linear", "quadratic"}, nil)
	s.weights.SetSelected("unweighted")
	s.run = widget.NewButtonWithIcon("Compare", theme.MediaPlayIcon(), s.compute)
	s.run.Importance = widget.HighImportance
	s.progress = widget.NewProgressBar()
	s.progress.Hide()
	s.pair = widget.NewSelect(nil, func(string) { s.showPair(s.pair.SelectedIndex()) })
	s.headline = widget.NewLabel("Pick at least two annotators and press Compare.")
	s.headline.Wrapping = fyne.TextWrapWord
	s.notes = widget.NewLabel("")
	s.notes.Wrapping = fyne.TextWrapWord
	s.notes.SizeName = theme.SizeNameCaptionText

	s.conf = newChartView(fyne.NewSize(360, 270))
	s.hist = newChartView(fyne.NewSize(360, 270))
	s.pairs = newSortTable([]string{"A", "B", "images", "matched", "only A", "only B", "F1", "mean IoU", "median IoU", "kappa", "95 % CI", "band (Landis & Koch 1977)"},
		func(row int) { s.pair.SetSelectedIndex(row) })
	s.classes = newSortTable([]string{"class", "boxes A", "boxes B", "agreed", "confused", "only A", "only B", "F1", "mean IoU", "kappa (class vs rest)", "95 % CI"}, nil)
	s.images = newSortTable([]string{"image", "disagreements", "boxes A", "boxes B", "matched", "only A", "only B", "class differs", "F1", "mean IoU"}, s.openImage)
	s.pairs.SetTextColumns(11) // the band, sorted by kappa

	controls := container.NewVBox(
		container.NewBorder(nil, nil, widget.NewLabel("Annotators"), nil, s.who),
		container.NewHBox(s.iouLabel, container.NewGridWrap(fyne.NewSize(200, 36), s.iou), s.aware,
			widget.NewLabel("Kappa weights (ordered classes)"), s.weights),
		container.NewBorder(nil, nil, container.NewHBox(s.run,
			widget.NewButtonWithIcon("Store consensus…", theme.DocumentSaveIcon(), s.askConsensus)), nil, s.progress),
		container.NewBorder(nil, nil, widget.NewLabel("Pair"), nil, s.pair),
	)
	charts := container.NewGridWithColumns(2,
		container.NewBorder(nil, widget.NewButtonWithIcon("Save chart as PNG…", theme.DocumentSaveIcon(), func() { s.savePlot(s.conf.Plot(), "confusion-matrix.png") }), nil, nil, s.conf),
		container.NewBorder(nil, widget.NewButtonWithIcon("Save chart as PNG…", theme.DocumentSaveIcon(), func() { s.savePlot(s.hist.Plot(), "iou-histogram.png") }), nil, nil, s.hist),
	)
	tableTab := func(t *sortTable, name, hint string) fyne.CanvasObject {
		bar := container.NewHBox(widget.NewButtonWithIcon("Save table as CSV…", theme.DocumentSaveIcon(), func() { s.saveCSV(t, name) }), widget.NewLabel(hint))
		return container.NewBorder(nil, bar, nil, nil, t.Object())
	}
	tabs := container.NewAppTabs(
		container.NewTabItem("Summary", container.NewBorder(container.NewVBox(s.headline, widget.NewSeparator()), s.notes, nil, nil, charts)),
		container.NewTabItem("Images", tableTab(s.images, "images.csv", "Worst first. Click an image to open it with every annotator's boxes.")),
		container.NewTabItem("Classes", tableTab(s.classes, "classes.csv", "Click a column to sort.")),
		container.NewTabItem("Pairs", tableTab(s.pairs, "pairs.csv", "Every pair of annotators. Click one to show it.")),
	)
	s.win.SetContent(container.NewBorder(container.NewPadded(controls), nil, nil, nil, tabs))
	s.win.Resize(fyne.NewSize(1100, 820))
	s.win.SetOnClosed(func() {
		if s.cancel != nil {
			s.cancel()
		}
		u.agree = nil
	})
	return s
}

// compute runs the comparison in the background.
func (s *agreeScreen) compute() {
	names := s.who.Selected
	if len(names) < 2 {
		dialog.ShowInformation("Annotators", "Tick at least two annotators to compare.", s.win)
		return
	}
	// Keep the order of the list, not the order of ticking.
	var ordered []string
	for _, n := range s.who.Options {
		for _, m := range names {
			if n == m {
				ordered = append(ordered, n)
			}
		}
	}
	st := s.u.st
	if st == nil {
		return
	}
	if s.cancel != nil {
		s.cancel()
	}
	ctx, cancel := context.WithCancel(context.Background())
	s.cancel = cancel
	opt := agree.Options{Threshold: s.iou.Value, ClassAware: s.aware.Checked}
	wsel := s.weights.Selected // read widgets here, not in the goroutine
	s.run.Disable()
	s.progress.SetValue(0)
	s.progress.Show()
	go func() {
		d, err := ops.LoadAgreement(ctx, st, ordered)
		var rep agree.Report
		if err == nil {
			fyne.Do(func() { s.progress.SetValue(0.2) })
			opt.Classes = d.ClassOrder()
			if w := wsel; w == "linear" || w == "quadratic" {
				opt.Weights, _ = agree.DisagreementWeights(w, len(opt.Classes))
			}
			rep, err = agree.Compare(d.Images, len(d.Annotators), opt, func(done, total int) {
				fyne.Do(func() { s.progress.SetValue(0.2 + 0.8*float64(done)/float64(total)) })
			})
		}
		fyne.Do(func() {
			s.run.Enable()
			s.progress.Hide()
			if ctx.Err() != nil {
				return
			}
			if err != nil {
				dialog.ShowError(err, s.win)
			} else {
				s.data, s.rep, s.have = d, rep, true
				s.showReport()
			}
			if s.done != nil {
				s.done(err)
			}
		})
	}()
}

func (s *agreeScreen) showReport() {
	var opts []string
	for _, p := range s.rep.Pairs {
		opts = append(opts, s.data.Annotators[p.A].Name+" vs "+s.data.Annotators[p.B].Name)
	}
	s.pair.SetOptions(opts)
	var rows [][]string
	var keys [][]float64
	for _, p := range s.rep.Pairs {
		band := "—"
		if !math.IsNaN(p.Kappa.Kappa) {
			band = agree.Band(p.Kappa.Kappa)
		}
		rows = append(rows, []string{s.data.Annotators[p.A].Name, s.data.Annotators[p.B].Name, strconv.Itoa(p.Images), strconv.Itoa(p.Matched),
			strconv.Itoa(p.OnlyA), strconv.Itoa(p.OnlyB), ops.F4(p.F1), ops.F4(p.IoU.Mean), ops.F4(p.IoU.Median), ops.F4(p.Kappa.Kappa), ops.CI(p.Kappa.CI95), band})
		keys = append(keys, []float64{math.NaN(), math.NaN(), float64(p.Images), float64(p.Matched), float64(p.OnlyA), float64(p.OnlyB),
			p.F1, p.IoU.Mean, p.IoU.Median, p.Kappa.Kappa, p.Kappa.CI95[0], p.Kappa.Kappa})
	}
	s.pairs.SetRows(rows, keys)
	s.pair.SetSelectedIndex(0) // shows it
}

// showPair fills the summary, charts and tables for one pair.
func (s *agreeScreen) showPair(i int) {
	if !s.have || i < 0 || i >= len(s.rep.Pairs) {
		return
	}
	s.shown = i
	p := s.rep.Pairs[i]
	d := s.data
	a, b := d.Annotators[p.A].Name, d.Annotators[p.B].Name
	mode := "class-agnostic"
	if s.rep.Options.ClassAware {
		mode = "class-aware"
	}
	var h strings.Builder
	fmt.Fprintf(&h, "%s vs %s, IoU ≥ %.2f, %s matching: %d images, %d matched pairs, %d only %s, %d only %s.\n",
		a, b, s.rep.Threshold, mode, p.Images, p.Matched, p.OnlyA, a, p.OnlyB, b)
	fmt.Fprintf(&h, "Detection F1 %s.   IoU of matched pairs: mean %s, median %s, 10th–90th percentile %s–%s.\n",
		ops.F4(p.F1), ops.F4(p.IoU.Mean), ops.F4(p.IoU.Median), ops.F4(p.IoU.P10), ops.F4(p.IoU.P90))
	fmt.Fprintf(&h, "Cohen's kappa on the classes of matched pairs: %s, 95 %% CI %s, SE %s, z %s.\n", ops.FormatKappa(p.Kappa), ops.CI(p.Kappa.CI95), ops.F4(p.Kappa.SE), ops.F4(p.Kappa.Z))
	if wk := p.WeightedKappa; wk != nil {
		fmt.Fprintf(&h, "Weighted kappa (%s weights, classes in project order): %s, 95 %% CI %s.\n", s.weights.Selected, ops.FormatKappa(*wk), ops.CI(wk.CI95))
	}
	fmt.Fprintf(&h, "Counting unmatched boxes as \"no object\": kappa %s (biased low, see below).\n", ops.FormatKappa(p.KappaWithNoObject))
	if len(s.rep.Pairs) > 1 || s.rep.Fleiss != nil {
		if s.rep.Fleiss != nil {
			fmt.Fprintf(&h, "All %d annotators, %d objects: Fleiss' kappa %s; ", s.rep.Annotators, s.rep.Objects, ops.F4(s.rep.Fleiss.Kappa))
		} else {
			fmt.Fprintf(&h, "All %d annotators, %d objects: ", s.rep.Annotators, s.rep.Objects)
		}
	} else {
		fmt.Fprintf(&h, "%d objects: ", s.rep.Objects)
	}
	fmt.Fprintf(&h, "Krippendorff's alpha (nominal) %s.", ops.F4(s.rep.Alpha.Alpha))
	s.headline.SetText(h.String())
	notes := append([]string{"Bands: " + agree.BandCitation + ". " + agree.BandRule + " They are conventions, not acceptance criteria.", agree.NoObjectCaveat}, s.rep.Notes...)
	s.notes.SetText(strings.Join(notes, "\n"))

	names := d.Names(p.Classes)
	title := fmt.Sprintf("Classes of matched pairs (%d)", p.Matched)
	s.conf.SetChart(func(st ops.ChartStyle) (*plot.Plot, error) {
		return ops.ConfusionPlot(st, title, a, b, names, names, p.Confusion)
	})
	bins, thr := p.IoU.Histogram, s.rep.Threshold
	s.hist.SetChart(func(st ops.ChartStyle) (*plot.Plot, error) {
		return ops.IoUHistogramPlot(st, "IoU of matched pairs", bins[:], thr)
	})

	var rows [][]string
	var keys [][]float64
	for _, c := range p.PerClass {
		rows = append(rows, []string{d.Name(c.Class), strconv.Itoa(c.A), strconv.Itoa(c.B), strconv.Itoa(c.Agreed), strconv.Itoa(c.Confused),
			strconv.Itoa(c.OnlyA), strconv.Itoa(c.OnlyB), ops.F4(c.F1), ops.F4(c.MeanIoU), ops.F4(c.Kappa.Kappa), ops.CI(c.Kappa.CI95)})
		keys = append(keys, []float64{math.NaN(), float64(c.A), float64(c.B), float64(c.Agreed), float64(c.Confused), float64(c.OnlyA), float64(c.OnlyB),
			c.F1, c.MeanIoU, c.Kappa.Kappa, c.Kappa.CI95[0]})
	}
	s.classes.SetRows(rows, keys)
	s.imgRows = p.PerImage
	rows, keys = nil, nil
	for _, im := range p.PerImage {
		rows = append(rows, []string{im.Name, strconv.Itoa(im.Errors), strconv.Itoa(im.A), strconv.Itoa(im.B), strconv.Itoa(im.Matched),
			strconv.Itoa(im.OnlyA), strconv.Itoa(im.OnlyB), strconv.Itoa(im.ClassDisagreements), ops.F4(im.F1), ops.F4(im.MeanIoU)})
		keys = append(keys, []float64{math.NaN(), float64(im.Errors), float64(im.A), float64(im.B), float64(im.Matched), float64(im.OnlyA),
			float64(im.OnlyB), float64(im.ClassDisagreements), im.F1, im.MeanIoU})
	}
	s.images.SetRows(rows, keys)
}

// openImage shows a row of the image table in the main window with every
// compared annotator's boxes.
func (s *agreeScreen) openImage(row int) {
	if row < 0 || row >= len(s.imgRows) {
		return
	}
	id := s.imgRows[row].ImageID
	for _, im := range s.data.Images {
		if im.ImageID == id {
			var names []string
			for _, a := range s.data.Annotators {
				names = append(names, a.Name)
			}
			s.u.openComparison(newComparison(im, names, s.rep.Threshold, s.rep.Options.ClassAware))
			return
		}
	}
}

func (s *agreeScreen) savePlot(p *plot.Plot, name string) {
	askSavePlot(s.win, p, name, "Press Compare first.")
}

func (s *agreeScreen) saveCSV(t *sortTable, name string) { askSaveCSV(s.win, t, name) }

// askConsensus stores the consensus of the ticked annotators.
func (s *agreeScreen) askConsensus() {
	names := s.who.Selected
	if len(names) < 2 {
		dialog.ShowInformation("Consensus", "Tick at least two annotators.", s.win)
		return
	}
	minEntry := widget.NewEntry()
	minEntry.SetText(strconv.Itoa(len(names)/2 + 1))
	median := widget.NewCheck("Median of the coordinates (default: mean)", nil)
	form := dialog.NewForm("Store consensus", "Store", "Cancel", []*widget.FormItem{
		widget.NewFormItem("Annotators", widget.NewLabel(strings.Join(names, ", "))),
		widget.NewFormItem("Seen by at least", minEntry),
		widget.NewFormItem("", median),
		widget.NewFormItem("", widget.NewLabel(fmt.Sprintf("Replaces the boxes of the annotator %q; IoU ≥ %.2f.", ops.ConsensusName, s.iou.Value))),
	}, func(ok bool) {
		if !ok {
			return
		}
		k, err := strconv.Atoi(strings.TrimSpace(minEntry.Text))
		if err != nil || k < 1 || k > len(names) {
			dialog.ShowError(fmt.Errorf("\"seen by at least\" must be a whole number from 1 to %d", len(names)), s.win)
			return
		}
		st, iou := s.u.st, s.iou.Value
		var n, ties int
		s.u.runJob("Storing the consensus", func(ctx context.Context, progress func(float64)) error {
			var err error
			n, ties, err = ops.StoreConsensus(ctx, st, names, iou, k, median.Checked)
			return err
		}, func() {
			if err := s.u.reload(); err != nil {
				s.u.showError(err)
			}
			dialog.ShowInformation("Consensus", fmt.Sprintf("Stored %s as annotator %q; %d tied class votes are marked for review in their source. Export can hand them to training.", ops.Plural(n, "box"), ops.ConsensusName, ties), s.win)
		})
	}, s.win)
	form.Resize(fyne.NewSize(480, 300))
	form.Show()
}
