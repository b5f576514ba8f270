package gui

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"
	"gonum.org/v1/plot"

	"boxwright/app/ops"
	"boxwright/project"
)

// errStopped is how the training window's Cancel ends a run.
var errStopped = errors.New("training cancelled; no model was stored")

// trainScreen is the window that trains a detector on the project's labels
// in the background while labelling goes on in the main window.
type trainScreen struct {
	u   *ui
	win fyne.Window

	annotator  *widget.Select
	classes    *widget.CheckGroup
	minutes    *widget.Entry
	validation *widget.Entry
	rotations  *widget.Check
	cont       *widget.Check
	start      *widget.Button
	pause      *widget.Button
	cancel     *widget.Button
	suggest    *widget.Button
	where      *widget.Select
	status     *widget.Label
	lossChart  *chartView
	apChart    *chartView
	epochs     *sortTable

	mu      sync.Mutex
	paused  bool
	resume  chan struct{}
	stop    context.CancelFunc
	running bool
	curve   []project.Epoch
}

// showTraining opens the training window (one per main window).
func (u *ui) showTraining() {
	if !u.haveProject() {
		return
	}
	if u.training != nil {
		u.training.win.RequestFocus()
		return
	}
	s := newTrainScreen(u)
	u.training = s
	s.win.SetOnClosed(func() {
		s.stopRun()
		u.training = nil
	})
	s.win.Show()
}

func newTrainScreen(u *ui) *trainScreen {
	s := &trainScreen{u: u, win: u.app.NewWindow("Boxwright — train a detector on this project")}
	names := u.annotatorNames()
	s.annotator = widget.NewSelect(names, nil)
	switch {
	case u.me.Name != "" && slices.Contains(names, u.me.Name):
		s.annotator.SetSelected(u.me.Name)
	case slices.Contains(names, ops.ConsensusName):
		s.annotator.SetSelected(ops.ConsensusName)
	case len(names) > 0:
		s.annotator.SetSelected(names[0])
	}
	var classNames []string
	for _, c := range u.classes {
		classNames = append(classNames, c.Name)
	}
	s.classes = widget.NewCheckGroup(classNames, nil)
	s.classes.Horizontal = true
	s.classes.SetSelected(classNames)
	s.minutes = widget.NewEntry()
	s.minutes.SetText("5")
	s.validation = widget.NewEntry()
	s.validation.SetText("0.2")
	s.rotations = widget.NewCheck("Orientation does not matter (learn from quarter turns too)", nil)
	s.cont = widget.NewCheck("Continue from the current model when its classes match", nil)
	s.start = widget.NewButtonWithIcon("Start training", theme.MediaPlayIcon(), s.startRun)
	s.start.Importance = widget.HighImportance
	s.pause = widget.NewButtonWithIcon("Pause", theme.MediaPauseIcon(), s.togglePause)
	s.cancel = widget.NewButtonWithIcon("Cancel", theme.CancelIcon(), s.stopRun)
	s.suggest = widget.NewButtonWithIcon("Suggest with the current model", theme.SearchIcon(), s.suggestUnlabelled)
	s.where = widget.NewSelect([]string{whereUnlabelled, whereThis, whereNext, whereAll}, nil)
	s.where.SetSelected(whereUnlabelled)
	s.status = widget.NewLabel("Learns the chosen annotator's boxes. Labelling goes on in the main window while it trains.")
	s.status.Wrapping = fyne.TextWrapWord
	s.lossChart = newChartView(fyne.NewSize(380, 260))
	s.apChart = newChartView(fyne.NewSize(380, 260))
	s.epochs = newSortTable([]string{"epoch", "loss", "val AP50", "seconds"}, nil)
	saveLoss := widget.NewButtonWithIcon("Loss chart as PNG…", theme.DocumentSaveIcon(), func() {
		askSavePlot(s.win, s.lossChart.Plot(), "training-loss.png", "No epoch has finished yet.")
	})
	saveAP := widget.NewButtonWithIcon("AP50 chart as PNG…", theme.DocumentSaveIcon(), func() {
		askSavePlot(s.win, s.apChart.Plot(), "validation-ap50.png", "No epoch has finished yet.")
	})
	saveCSV := widget.NewButtonWithIcon("Epochs as CSV…", theme.DocumentSaveIcon(), func() { askSaveCSV(s.win, s.epochs, "learning-curve.csv") })
	form := widget.NewForm(
		widget.NewFormItem("Learn the boxes of", s.annotator),
		widget.NewFormItem("Classes", s.classes),
		widget.NewFormItem("Minutes", s.minutes),
		widget.NewFormItem("Validation share", s.validation),
	)
	caution := widget.NewLabel("A model trained on a few dozen images is a labelling aid, not a validated detector: review everything it suggests.")
	caution.Wrapping = fyne.TextWrapWord
	caution.TextStyle.Italic = true
	s.updateButtons()
	s.showCurve() // empty axes say what will appear
	top := container.NewVBox(form, s.rotations, s.cont,
		container.NewHBox(s.start, s.pause, s.cancel),
		container.NewBorder(nil, nil, container.NewHBox(s.suggest, widget.NewLabel("on")), nil, s.where), s.status, caution)
	charts := container.NewGridWithColumns(2, s.lossChart, s.apChart)
	bottom := container.NewHBox(saveLoss, saveAP, saveCSV)
	s.win.SetContent(container.NewBorder(top, bottom, nil, nil, container.NewVSplit(charts, s.epochs.Object())))
	s.win.Resize(fyne.NewSize(860, 760))
	return s
}

func (s *trainScreen) updateButtons() {
	s.mu.Lock()
	running, paused := s.running, s.paused
	s.mu.Unlock()
	set := func(b *widget.Button, on bool) {
		if on {
			b.Enable()
		} else {
			b.Disable()
		}
	}
	set(s.start, !running)
	set(s.pause, running)
	set(s.cancel, running)
	set(s.suggest, !running)
	if paused {
		s.pause.SetText("Resume")
		s.pause.SetIcon(theme.MediaPlayIcon())
	} else {
		s.pause.SetText("Pause")
		s.pause.SetIcon(theme.MediaPauseIcon())
	}
}

// job reads the form.
func (s *trainScreen) job() (ops.TrainJob, error) {
	var j ops.TrainJob
	if s.annotator.Selected == "" {
		return j, fmt.Errorf("choose whose boxes to learn")
	}
	if len(s.classes.Selected) == 0 {
		return j, fmt.Errorf("choose at least one class")
	}
	min, err := strconv.ParseFloat(strings.TrimSpace(s.minutes.Text), 64)
	if err != nil || !(min > 0) || min > 7*24*60 {
		return j, fmt.Errorf("minutes %q: give a number of minutes above 0", s.minutes.Text)
	}
	val, err := strconv.ParseFloat(strings.TrimSpace(s.validation.Text), 64)
	if err != nil || val < 0 || val > 0.9 || math.IsNaN(val) {
		return j, fmt.Errorf("validation share %q: give a number from 0 to 0.9", s.validation.Text)
	}
	// The window's classes keep the project's order.
	for _, c := range s.u.classes {
		if slices.Contains(s.classes.Selected, c.Name) {
			j.Classes = append(j.Classes, c.Name)
		}
	}
	j.Annotator, j.Budget, j.Validation = s.annotator.Selected, time.Duration(min*float64(time.Minute)), val
	j.Seed, j.QuarterTurns, j.Continue = 1, s.rotations.Checked, s.cont.Checked
	return j, nil
}

func (s *trainScreen) startRun() {
	j, err := s.job()
	if err != nil {
		dialog.ShowError(err, s.win)
		return
	}
	st := s.u.st
	ctx, cancel := context.WithCancel(context.Background())
	s.mu.Lock()
	s.running, s.paused, s.stop, s.resume = true, false, cancel, make(chan struct{})
	s.curve = nil
	s.mu.Unlock()
	s.showCurve()
	s.updateButtons()
	s.status.SetText("Reading the images…")
	started := time.Now()
	j.Epoch = func(e project.Epoch) {
		fyne.Do(func() {
			s.mu.Lock()
			s.curve = append(s.curve, e)
			s.mu.Unlock()
			s.showCurve()
			s.status.SetText(fmt.Sprintf("Epoch %d: loss %.4f, validation AP50 %s, %s so far.", e.Epoch, e.Loss, ops.F4(e.ValAP50), time.Since(started).Round(time.Second)))
		})
	}
	j.Gate = s.gate
	go func() {
		rep, err := ops.Train(ctx, st, j)
		fyne.Do(func() {
			s.mu.Lock()
			s.running, s.paused = false, false
			s.mu.Unlock()
			cancel()
			s.updateButtons()
			switch {
			case err != nil && ctx.Err() != nil:
				s.status.SetText(errStopped.Error())
			case err != nil:
				s.status.SetText("Training stopped: " + err.Error())
				dialog.ShowError(err, s.win)
			default:
				msg := fmt.Sprintf("Stored %s as the current model: %s, input %d px, %d training and %d validation images, validation AP50 %s.",
					rep.Model.Name, strings.Join(rep.Model.Classes, ", "), rep.Model.InputSize, rep.TrainImages, rep.ValImages, ops.F4(rep.Model.ValAP50))
				if len(rep.Skipped) > 0 {
					msg += " Left out: " + strings.Join(rep.Skipped, "; ") + "."
				}
				if len(rep.Failed) > 0 {
					msg += fmt.Sprintf(" %s could not be read: %s.", ops.Plural(len(rep.Failed), "image"), strings.Join(rep.Failed, "; "))
				}
				msg += " Memory: " + ops.TrainMemory(rep) + "."
				s.status.SetText(msg)
			}
		})
	}()
}

// gate blocks the training goroutine while paused.
func (s *trainScreen) gate(ctx context.Context) error {
	for {
		s.mu.Lock()
		paused, resume := s.paused, s.resume
		s.mu.Unlock()
		if !paused {
			return ctx.Err()
		}
		select {
		case <-ctx.Done():
			return ctx.Err()
		case <-resume:
		}
	}
}

func (s *trainScreen) togglePause() {
	s.mu.Lock()
	if !s.running {
		s.mu.Unlock()
		return
	}
	s.paused = !s.paused
	if !s.paused {
		close(s.resume)
		s.resume = make(chan struct{})
	}
	paused := s.paused
	s.mu.Unlock()
	if paused {
		s.status.SetText("Paused: the batch under way finishes, then training waits.")
	} else {
		s.status.SetText("Training again.")
	}
	s.updateButtons()
}

// stopRun cancels a run under way; no model is stored.
func (s *trainScreen) stopRun() {
	s.mu.Lock()
	stop := s.stop
	s.mu.Unlock()
	if stop != nil {
		stop()
	}
}

// showCurve redraws the charts and the epoch table from the curve so far.
func (s *trainScreen) showCurve() {
	s.mu.Lock()
	curve := append([]project.Epoch(nil), s.curve...)
	s.mu.Unlock()
	var rows [][]string
	var keys [][]float64
	for _, e := range curve {
		rows = append(rows, []string{strconv.Itoa(e.Epoch), ops.F4(e.Loss), ops.F4(e.ValAP50), fmt.Sprintf("%.0f", e.Seconds)})
		keys = append(keys, []float64{float64(e.Epoch), e.Loss, e.ValAP50, e.Seconds})
	}
	s.epochs.SetRows(rows, keys)
	s.lossChart.SetChart(func(st ops.ChartStyle) (*plot.Plot, error) {
		lp, _, err := ops.LearningCurvePlots(st, curve)
		return lp, err
	})
	s.apChart.SetChart(func(st ops.ChartStyle) (*plot.Plot, error) {
		_, ap, err := ops.LearningCurvePlots(st, curve)
		return ap, err
	})
}

// Where the current model may look.
const (
	whereUnlabelled = "the images without labels"
	whereThis       = "this image"
	whereNext       = "the next 10 images"
	whereAll        = "every image"
	nextImages      = 10
)

// targets are the images a choice of s.where names; nil means the images
// without labels (ops.Detect's own default).
func (s *trainScreen) targets(choice string) []project.Image {
	u := s.u
	switch choice {
	case whereThis:
		if u.selected >= 0 && u.selected < len(u.images) {
			return []project.Image{u.images[u.selected]}
		}
		return []project.Image{}
	case whereNext:
		from := max(u.selected+1, 0)
		return append([]project.Image{}, u.images[min(from, len(u.images)):min(from+nextImages, len(u.images))]...)
	case whereAll:
		return append([]project.Image{}, u.images...)
	}
	return nil
}

// suggestUnlabelled runs the current model on the chosen images and stores
// what it finds as pending suggestions of the model's name.
func (s *trainScreen) suggestUnlabelled() {
	u := s.u
	st := u.st
	ims := s.targets(s.where.Selected)
	if ims != nil && len(ims) == 0 {
		dialog.ShowInformation("Suggest with the current model", "There is no image there to look at.", s.win)
		return
	}
	var rep ops.DetectReport
	u.runJob("Suggesting with the current model", func(ctx context.Context, progress func(float64)) error {
		var err error
		rep, err = ops.Detect(ctx, st, ops.DetectJob{Images: ims, MinScore: 0.3, NMS: 0.5, Save: true,
			Progress: func(done, total int) { progress(float64(done) / float64(total)) }})
		return err
	}, func() {
		if err := u.reload(); err != nil {
			u.showError(err)
		}
		msg := fmt.Sprintf("%s on %s, pending review as source %q.", ops.Plural(len(rep.Detections), "suggestion"), ops.Plural(rep.Images, "image"), rep.Source)
		if rep.Images == 0 {
			msg = "Every image has labels or is skipped, so there was nothing to suggest on: choose this image, the next 10 or every image."
		}
		if len(rep.Failed) > 0 {
			msg += fmt.Sprintf(" %s could not be read.", ops.Plural(len(rep.Failed), "image"))
		}
		dialog.ShowInformation("Suggestions from "+rep.Model, msg, s.win)
	})
}
