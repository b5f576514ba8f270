package gui

import (
	"context"
	"fmt"
	"image/color"
	"math"
	"strconv"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/project/agree"
	"boxwright/project/eval"
)

// evalScreen is the model-evaluation window.
type evalScreen struct {
	u   *ui
	win fyne.Window

	truth, source, protocol, interp *widget.Select
	iou, threshold                  *widget.Entry
	plusOne                         *widget.Check
	run                             *widget.Button
	progress                        *widget.ProgressBarInfinite
	headline                        *widget.Label

	prChart, confChart *chartView
	tabs               *container.AppTabs
	classes, cellBoxes *sortTable
	cellRow, cellCol   *widget.Select

	data ops.EvalData
	res  eval.Result
	conf eval.Confusion
	opt  eval.Options
	have bool
	// cell lists the (truth, prediction) pairs of the chosen confusion cell.
	cell [][2]int64
	// done, when set, is called after each evaluation (for tests).
	done func(error)
}

func (u *ui) showEvaluation() {
	if !u.haveProject() {
		return
	}
	s := newEvalScreen(u)
	s.win.Show()
}

func newEvalScreen(u *ui) *evalScreen {
	s := &evalScreen{u: u, win: u.app.NewWindow("Boxwright — model evaluation")}
	names := u.annotatorNames()
	s.truth = widget.NewSelect(names, nil)
	for _, n := range names {
		if n == ops.ConsensusName {
			s.truth.SetSelected(n)
		}
	}
	if s.truth.Selected == "" && len(names) > 0 {
		s.truth.SetSelected(names[0])
	}
	sources, err := u.st.SuggestionSources(context.Background())
	if err != nil {
		u.showError(fmt.Errorf("evaluation: reading the suggestion sources: %w", err))
	}
	s.source = widget.NewSelect(sources, nil)
	if len(sources) > 0 {
		s.source.SetSelected(sources[0])
	}
	s.protocol = widget.NewSelect([]string{"voc", "coco"}, func(p string) {
		if p == "coco" {
			s.interp.SetSelected("101")
		} else {
			s.interp.SetSelected("all")
		}
	})
	s.interp = widget.NewSelect([]string{"all", "11", "101"}, nil)
	s.protocol.SetSelected("voc")
	s.iou = widget.NewEntry()
	s.iou.SetText("0.5")
	s.threshold = widget.NewEntry()
	s.threshold.SetText("0.5")
	s.plusOne = widget.NewCheck("Pixel-inclusive (+1) areas", nil)
	s.run = widget.NewButtonWithIcon("Evaluate", theme.MediaPlayIcon(), s.compute)
	s.run.Importance = widget.HighImportance
	s.progress = widget.NewProgressBarInfinite()
	s.progress.Stop()
	s.progress.Hide()
	s.headline = widget.NewLabel("Pick the ground truth and the model's source, then Evaluate. Only images the ground-truth annotator labelled or marked done count.")
	s.headline.Wrapping = fyne.TextWrapWord
	s.prChart = newChartView(fyne.NewSize(360, 280))
	s.confChart = newChartView(fyne.NewSize(360, 280))
	s.classes = newSortTable([]string{"class", "truth", "predictions", "TP", "FP", "AP", "AP50", "AP75", "precision", "recall", "F1", "best F1", "at score"}, nil)
	s.cellRow = widget.NewSelect(nil, func(string) { s.listCell() })
	s.cellCol = widget.NewSelect(nil, func(string) { s.listCell() })
	s.cellBoxes = newSortTable([]string{"image", "truth box", "predicted box", "score", "IoU"}, s.openCell)

	form := container.NewGridWithColumns(4,
		widget.NewLabel("Ground truth"), s.truth, widget.NewLabel("Model (source)"), s.source,
		widget.NewLabel("Matching"), s.protocol, widget.NewLabel("Interpolation"), s.interp,
		widget.NewLabel("IoU (VOC-style)"), s.iou, widget.NewLabel("Score for P/R/F1"), s.threshold)
	controls := container.NewVBox(form, container.NewHBox(s.plusOne, s.run), s.progress, s.headline)
	save := func(get func() *plot.Plot, name string) *widget.Button {
		return widget.NewButtonWithIcon("Save chart as PNG…", theme.DocumentSaveIcon(), func() { s.savePlot(get(), name) })
	}
	charts := container.NewGridWithColumns(2,
		container.NewBorder(nil, save(s.prChart.Plot, "precision-recall.png"), nil, nil, s.prChart),
		container.NewBorder(nil, container.NewHBox(save(s.confChart.Plot, "confusion.png"), widget.NewLabel("Click a cell to list its boxes.")), nil, nil, s.confChart))
	classTab := container.NewBorder(nil, widget.NewButtonWithIcon("Save table as CSV…", theme.DocumentSaveIcon(), func() { s.saveCSV(s.classes, "classes.csv") }), nil, nil, s.classes.Object())
	cellTab := container.NewBorder(container.NewHBox(widget.NewLabel("Ground truth"), s.cellRow, widget.NewLabel("predicted as"), s.cellCol),
		container.NewHBox(widget.NewButtonWithIcon("Save table as CSV…", theme.DocumentSaveIcon(), func() { s.saveCSV(s.cellBoxes, "boxes.csv") }),
			widget.NewLabel("Click a row to open the image with both boxes.")), nil, nil, s.cellBoxes.Object())
	s.tabs = container.NewAppTabs(container.NewTabItem("Charts", charts), container.NewTabItem("Classes", classTab), container.NewTabItem("Boxes behind a cell", cellTab))
	s.win.SetContent(container.NewBorder(container.NewPadded(controls), nil, nil, nil, s.tabs))
	s.win.Resize(fyne.NewSize(1100, 820))
	return s
}

func (s *evalScreen) compute() {
	iou, err1 := strconv.ParseFloat(s.iou.Text, 64)
	thr, err2 := strconv.ParseFloat(s.threshold.Text, 64)
	if err1 != nil || err2 != nil {
		dialog.ShowError(fmt.Errorf("the IoU and the score must be numbers"), s.win)
		return
	}
	opt, err := ops.EvalOptions(s.protocol.Selected, iou, s.interp.Selected, s.plusOne.Checked, thr)
	if err != nil {
		dialog.ShowError(err, s.win)
		return
	}
	if s.truth.Selected == "" || s.source.Selected == "" {
		dialog.ShowInformation("Model evaluation", "The project needs an annotator's labels and a source of suggestions to compare.", s.win)
		return
	}
	st, j := s.u.st, ops.EvalJob{Truth: s.truth.Selected, Source: s.source.Selected}
	s.run.Disable()
	s.progress.Show()
	s.progress.Start()
	go func() {
		d, err := ops.LoadEval(context.Background(), st, j)
		var res eval.Result
		var conf eval.Confusion
		if err == nil {
			res, err = eval.Evaluate(d.Truths, d.Preds, opt)
			conf = eval.ConfusionMatrix(d.Truths, d.Preds, d.ClassIDs(), opt.IoU, opt.PlusOne)
		}
		fyne.Do(func() {
			s.run.Enable()
			s.progress.Stop()
			s.progress.Hide()
			if err != nil {
				dialog.ShowError(err, s.win)
			} else {
				s.data, s.res, s.conf, s.opt, s.have = d, res, conf, opt, true
				s.show()
			}
			if s.done != nil {
				s.done(err)
			}
		})
	}()
}

func (s *evalScreen) show() {
	d, res, opt := s.data, s.res, s.opt
	iou := fmt.Sprintf("IoU ≥ %.2f", opt.IoU)
	if opt.Protocol == eval.COCO {
		iou = "IoU 0.50:0.05:0.95"
	}
	s.headline.SetText(fmt.Sprintf("%s against %s: %d images, %d ground-truth boxes, %d predictions. %s, %s, %s AP.\nmAP %s · AP50 %s · AP75 %s · AP[.50:.95] %s · at score ≥ %.2f: precision %s, recall %s, F1 %s · best F1 %s at score %s",
		d.Source, d.TruthName, len(d.Images), len(d.Truths), len(d.Preds), ops.ProtocolName(opt.Protocol), iou, ops.InterpName(opt.Interpolation),
		ops.F4(res.MAP), ops.F4(res.AP50), ops.F4(res.AP75), ops.F4(res.AP50_95), opt.ScoreThreshold, ops.F4(res.Precision), ops.F4(res.Recall), ops.F4(res.F1), ops.F4(res.BestF1), ops.F4(res.BestF1Threshold)))
	var rows [][]string
	var keys [][]float64
	for _, c := range res.Classes {
		rows = append(rows, []string{d.ClassName[c.ClassID], strconv.Itoa(c.Truths), strconv.Itoa(c.Predictions), strconv.Itoa(c.TP), strconv.Itoa(c.FP),
			ops.F4(c.AP), ops.F4(c.AP50), ops.F4(c.AP75), ops.F4(c.Precision), ops.F4(c.Recall), ops.F4(c.F1), ops.F4(c.BestF1), ops.F4(c.BestF1Threshold)})
		keys = append(keys, []float64{math.NaN(), float64(c.Truths), float64(c.Predictions), float64(c.TP), float64(c.FP), c.AP, c.AP50, c.AP75,
			c.Precision, c.Recall, c.F1, c.BestF1, c.BestF1Threshold})
	}
	s.classes.SetRows(rows, keys)
	s.prChart.SetChart(s.prCurves)
	var names []string
	for _, c := range s.conf.Classes {
		names = append(names, d.ClassName[c])
	}
	rowNames := append(append([]string{}, names...), "false alarm")
	colNames := append(append([]string{}, names...), "missed")
	counts := make([][]float64, len(s.conf.Counts))
	for i, r := range s.conf.Counts {
		counts[i] = make([]float64, len(r))
		for j, v := range r {
			counts[i][j] = float64(v)
		}
	}
	s.confChart.SetChart(func(st ops.ChartStyle) (*plot.Plot, error) {
		return ops.ConfusionPlot(st, "Ground truth × prediction", "ground truth", "predicted", rowNames, colNames, counts)
	})
	s.confChart.SetMatrix(len(rowNames), len(colNames), s.chooseCell)
	s.cellRow.SetOptions(rowNames)
	s.cellCol.SetOptions(colNames)
}

// chooseCell shows the boxes behind cell (row, col) of the confusion
// matrix, as choosing its row and column does.
func (s *evalScreen) chooseCell(row, col int) {
	s.cellRow.SetSelectedIndex(row)
	s.cellCol.SetSelectedIndex(col)
	s.tabs.SelectIndex(2)
}

// prCurves draws every class's precision/recall curve on one chart.
func (s *evalScreen) prCurves(st ops.ChartStyle) (*plot.Plot, error) {
	p := st.NewPlot()
	p.Title.Text = "Precision and recall"
	p.Add(st.Grid()) // under the curves
	p.X.Label.Text, p.Y.Label.Text = "recall", "precision"
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 1, 0, 1
	for i, c := range s.res.Classes {
		if len(c.Curve) == 0 {
			continue
		}
		xys := make(plotter.XYs, len(c.Curve))
		for k, pt := range c.Curve {
			xys[k] = plotter.XY{X: pt.Recall, Y: pt.Precision}
		}
		l, err := plotter.NewLine(xys)
		if err != nil {
			return nil, err
		}
		l.Color = paletteColour(i)
		l.Width = 2
		l.Dashes = lineDashes(i)
		p.Add(l)
		p.Legend.Add(fmt.Sprintf("%s (AP %s)", s.data.ClassName[c.ClassID], ops.F4(c.AP)), l)
	}
	p.Legend.Top, p.Legend.Left = false, true
	return p, nil
}

// paletteColour is the class colour order of the project's palette, so
// curves stay apart for colour-blind readers; dashes tell them apart too.
func paletteColour(i int) color.Color { return project.PaletteColor(i) }

func lineDashes(i int) []vg.Length {
	patterns := [][]vg.Length{nil, {vg.Points(6), vg.Points(3)}, {vg.Points(2), vg.Points(2)}, {vg.Points(8), vg.Points(2), vg.Points(2), vg.Points(2)}}
	return patterns[i%len(patterns)]
}

// listCell fills the table of boxes behind the chosen confusion cell.
func (s *evalScreen) listCell() {
	if !s.have {
		return
	}
	r, c := s.cellRow.SelectedIndex(), s.cellCol.SelectedIndex()
	if r < 0 || c < 0 || r >= len(s.conf.Cells) || c >= len(s.conf.Cells[r]) {
		return
	}
	s.cell = s.conf.Cells[r][c]
	var rows [][]string
	var keys [][]float64
	for _, pair := range s.cell {
		t, p := s.truthAt(pair[0]), s.predAt(pair[1])
		img := int64(0)
		tb, pb, score, iou := "—", "—", math.NaN(), math.NaN()
		if t != nil {
			img, tb = t.ImageID, t.Box.String()
		}
		if p != nil {
			img, pb, score = p.ImageID, p.Box.String(), p.Score
		}
		if t != nil && p != nil {
			iou = eval.IoU(t.Box, p.Box, s.opt.PlusOne)
		}
		rows = append(rows, []string{s.data.ImageName[img], tb, pb, ops.F4(score), ops.F4(iou)})
		keys = append(keys, []float64{math.NaN(), math.NaN(), math.NaN(), score, iou})
	}
	s.cellBoxes.SetRows(rows, keys)
}

func (s *evalScreen) truthAt(ref int64) *eval.Truth {
	if ref < 0 || ref >= int64(len(s.data.Truths)) {
		return nil
	}
	return &s.data.Truths[ref]
}

func (s *evalScreen) predAt(ref int64) *eval.Prediction {
	if ref < 0 || ref >= int64(len(s.data.Preds)) {
		return nil
	}
	return &s.data.Preds[ref]
}

// openCell opens the image of a listed pair in the main window: the
// ground truth thin and solid, the prediction dashed, both ringed.
func (s *evalScreen) openCell(row int) {
	if row < 0 || row >= len(s.cell) {
		return
	}
	t, p := s.truthAt(s.cell[row][0]), s.predAt(s.cell[row][1])
	var img int64
	var im agree.ImageLabels
	im.By = make([]agree.Labels, 2)
	lonely := map[[2]int]bool{}
	if t != nil {
		img = t.ImageID
	} else if p != nil {
		img = p.ImageID
	}
	im.ImageID = img
	for _, x := range s.data.Truths {
		if x.ImageID == img {
			if t != nil && x.Ref == t.Ref {
				lonely[[2]int{0, len(im.By[0].Boxes)}] = true
			}
			im.By[0].Boxes = append(im.By[0].Boxes, x.Box)
			im.By[0].Classes = append(im.By[0].Classes, x.ClassID)
		}
	}
	for _, x := range s.data.Preds {
		if x.ImageID == img {
			if p != nil && x.Ref == p.Ref {
				lonely[[2]int{1, len(im.By[1].Boxes)}] = true
			}
			im.By[1].Boxes = append(im.By[1].Boxes, x.Box)
			im.By[1].Classes = append(im.By[1].Classes, x.ClassID)
		}
	}
	c := &comparison{imageID: img, names: []string{s.data.TruthName, s.data.Source}, labels: im, lonely: lonely}
	s.u.openComparison(c)
	s.u.compareNote.SetText(fmt.Sprintf("Evaluating — ground truth %s: thin solid, %s: dashes; the pair from the table has a white dashed ring", s.data.TruthName, s.data.Source))
}

func (s *evalScreen) savePlot(p *plot.Plot, name string) {
	askSavePlot(s.win, p, name, "Press Evaluate first.")
}

func (s *evalScreen) saveCSV(t *sortTable, name string) { askSaveCSV(s.win, t, name) }
