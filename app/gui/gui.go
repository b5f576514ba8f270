// Package gui is Boxwright's window. gui.go holds the ui type (the window,
// its menus, opening and reloading a project); the rest is one file per
// concern: project_dialogs.go (open, new, demo, add images, relink),
// jobs.go (background jobs with progress), cautions.go; the labelling
// screen in labelling.go (edits), keys.go, navigation.go, annotator.go,
// saving.go, navigator.go (image list), classbar.go and classrow.go,
// prefetch.go, suggestions_view.go; the review screens review_queue.go
// with review_view.go, and crop_grid.go with crop_cell.go, crop_cache.go
// and crop_image.go; the report screens agree_screen.go, compare_view.go,
// eval_screen.go and suggestions.go; similar.go (find similar objects),
// dataset.go (import and export dialogs), sorttable.go and
// save_dialogs.go. Work that is not about the screen goes through package
// ops.
package gui

import (
	"context"
	"errors"
	"fmt"
	"image/color"
	"io"
	"log"
	"net"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"time"

	"fyne.io/fyne/v2"
	fyneapp "fyne.io/fyne/v2/app"
	fcanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/driver/desktop"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"boxwright/app/backend"
	"boxwright/app/ops"
	"boxwright/canvas"
	"boxwright/project"
)

// Run opens the main window, with the project at path if it is not
// empty, labelling as annotator (empty: the remembered name, or ask), and
// returns when the window closes.
func Run(path, annotator string, stderr io.Writer) int {
	if why := noDisplay(runtime.GOOS, os.Getenv, net.DialTimeout); why != "" {
		fmt.Fprintf(stderr, "boxwright: %s\n", why)
		return 1
	}
	log.SetOutput(&quietLog{w: stderr})
	a := fyneapp.NewWithID("app.boxwright.desktop")
	u := newUI(a)
	u.annotatorFlag = annotator
	trace, err := openEditTrace(os.Getenv(editTraceEnv))
	if err != nil {
		fmt.Fprintf(stderr, "boxwright: %v\n", err)
		return 1
	}
	u.trace = trace
	defer trace.close()
	if path != "" {
		if err := u.openProject(path); err != nil {
			fmt.Fprintf(stderr, "boxwright: %v\n", err)
			return 1
		}
	}
	u.win.ShowAndRun()
	u.closeProject()
	return 0
}

// noDisplay says why no window can open, or "": on Linux and the BSDs a
// window needs an X display (this build draws through X11; Wayland desktops
// offer one through XWayland), and without a reachable one the toolkit
// panics instead of saying so. dial is net.DialTimeout in use.
func noDisplay(goos string, getenv func(string) string, dial func(network, addr string, d time.Duration) (net.Conn, error)) string {
	switch goos {
	case "linux", "freebsd", "openbsd", "netbsd":
	default:
		return ""
	}
	const headless = "run it in a desktop session, or use the command-line commands (boxwright help); boxwright demo DIR --no-open makes the demo without opening it"
	d := getenv("DISPLAY")
	if d == "" {
		return "no display to open a window on (DISPLAY is not set): " + headless
	}
	network, addr, ok := xDisplayAddr(d)
	if !ok {
		return fmt.Sprintf("DISPLAY=%q is not a display name like :0 or host:0: %s", d, headless)
	}
	c, err := dial(network, addr, 2*time.Second)
	if err != nil && network == "unix" && goos == "linux" {
		c, err = dial("unix", "@"+addr, 2*time.Second) // the abstract socket X servers also offer
	}
	if err != nil {
		return fmt.Sprintf("cannot reach the display DISPLAY=%s (%s %s): %s", d, network, addr, headless)
	}
	c.Close()
	return ""
}

// xDisplayAddr turns an X display name ([host]:number[.screen]) into the
// socket the X server listens on (X11 convention: unix socket
// /tmp/.X11-unix/X<number>, or TCP port 6000+number on a named host).
func xDisplayAddr(d string) (network, addr string, ok bool) {
	colon := strings.LastIndex(d, ":")
	if colon < 0 {
		return "", "", false
	}
	host, num := d[:colon], d[colon+1:]
	if dot := strings.IndexByte(num, '.'); dot >= 0 {
		num = num[:dot]
	}
	n, err := strconv.Atoi(num)
	if err != nil || n < 0 {
		return "", "", false
	}
	switch {
	case strings.HasPrefix(host, "/"): // a socket path given whole
		return "unix", d[:colon] + ":" + num, true
	case host == "" || host == "unix":
		return "unix", fmt.Sprintf("/tmp/.X11-unix/X%d", n), true
	default:
		return "tcp", net.JoinHostPort(strings.TrimPrefix(host, "tcp/"), strconv.Itoa(6000+n)), true
	}
}

// ui is the main window and the open project.
type ui struct {
	app fyne.App
	win fyne.Window

	st   backend.Project
	path string
	// readOnlyWhy, when set, says why the project is open for looking
	// only (a read-only file or folder, a damaged file); editing is off.
	readOnlyWhy string
	// countsMissing: a damaged page kept the label counts from being read.
	countsMissing bool
	// stopWatch ends following a server project's changes.
	stopWatch func()
	// role is the person's kind of member in a server project ("" for a
	// project file); ownerItems are the menu items only owners may use.
	role          string
	ownerItems    []*fyne.MenuItem
	reviewerItems []*fyne.MenuItem
	// itemLabels keeps each role-limited item's own label, to which the
	// reason is added while the item is off.
	itemLabels map[*fyne.MenuItem]string
	// raw is the open project as opened (u.st may wrap it for the edit
	// trace); claimed is the image this person claims, stopClaim ends the
	// claim, alsoHere names the others on the image on screen.
	raw       backend.Project
	claimed   int64
	stopClaim func()
	alsoHere  string
	claimsBy  map[int64][]string // others on each image, for the list
	assigned  map[int64]bool     // images handed to this person (nil: none handed out)
	// onChanges, when set (tests), hears each batch of others' changes
	// after the screen was brought up to date.
	onChanges func([]backend.Change)
	banner    *fyne.Container
	images    []project.Image
	perImg    map[int64]project.ImageCounts
	classes   []project.Class
	classBy   map[int64]project.Class
	// tallies: labels by image, then class or annotator (all annotators).
	byClass     map[int64]map[int64]int
	byAnnotator map[int64]map[int64]int
	byPair      map[int64]map[[2]int64]int // image → (class, annotator)
	classTotal  map[int64]int

	annotators    []project.Annotator
	annotatorFlag string
	// annotatorFromFlag is set while the command line's name is applied.
	annotatorFromFlag bool
	me                project.Annotator // who is labelling; ID 0 until chosen
	sess              *ops.Session
	current           int64 // class for new boxes

	nav     *navigator
	view    *canvas.View
	bar     *classBar
	summary *widget.Label
	status  *widget.Label // image and pointer
	saved   *widget.Label // quiet "saved" indicator or the write error
	retry   *widget.Button
	// retrying is set while a quiet retry of unwritten edits is scheduled.
	retrying bool
	zoom     *widget.Label
	undoBtn  *widget.Button
	redoBtn  *widget.Button
	others   *widget.Check
	guides   *widget.Check
	body     *fyne.Container // the screen shown in the window: welcome or project
	// panels holds the image list, image and class panel (layoutPanels).
	panels, leftPanel, centre *fyne.Container
	hideList, hideClasses     bool

	selected int   // index into images of the image on screen, -1 none
	imageID  int64 // its ID
	other    []project.Label
	cache    *imageCache
	prefetch bool

	pointer string

	suggestions         []project.Suggestion // pending, on the image on screen
	suggestionEdits     map[int64]project.Suggestion
	showSuggestions     *widget.Check
	suggestionThreshold float64
	// dupIoU is the overlap with an own box of the same class at which a
	// new, accepted or corrected box is asked about (duplicates.go).
	dupIoU float64
	// overlapAsk is the overlap question on screen, if any (for tests).
	overlapAsk *overlapQuestion
	// escDialog is the open dialog Esc closes; keysDialog the keys overlay.
	escDialog, keysDialog dialog.Dialog

	similar    *similarRun  // the last exemplar search, for its live threshold
	training   *trainScreen // the training window, while it is open
	similarWin fyne.Window

	agree       *agreeScreen // the agreement report window, when open
	compare     *comparison  // an image opened from the agreement report
	compareBar  *fyne.Container
	compareNote *widget.Label

	cancelDecode context.CancelFunc
	// decoded, when set, receives each image the view shows (for tests).
	decoded func(id int64, err error)
	// trace, when set, records writes and acknowledgements (edittrace.go).
	trace *editTrace
}

func newUI(a fyne.App) *ui {
	u := &ui{app: a, win: a.NewWindow("Boxwright"), selected: -1, cache: newImageCache(), prefetch: true}
	u.view = canvas.NewView()
	u.summary = widget.NewLabel("")
	u.summary.Wrapping = fyne.TextWrapWord
	u.status = widget.NewLabel("")
	u.status.Truncation = fyne.TextTruncateEllipsis
	u.saved = widget.NewLabel("")
	u.retry = widget.NewButtonWithIcon("Retry saving", theme.ViewRefreshIcon(), u.flush)
	u.retry.Hide()
	u.zoom = widget.NewLabel("")
	u.nav = newNavigator(u)
	u.bar = newClassBar(u.win, func() backend.Project { return u.st }, u.classesChanged, u.pickClass)
	u.undoBtn = widget.NewButtonWithIcon("", theme.ContentUndoIcon(), u.undo)
	u.redoBtn = widget.NewButtonWithIcon("", theme.ContentRedoIcon(), u.redo)
	u.others = widget.NewCheck("Others", func(on bool) { u.view.SetShowReadOnly(on); u.giveKeysBack() })
	u.others.SetChecked(true)
	u.suggestionThreshold = defaultSuggestionThreshold
	u.dupIoU = a.Preferences().FloatWithFallback(dupIoUPref, ops.DefaultDuplicateIoU)
	u.suggestionEdits = map[int64]project.Suggestion{}
	u.showSuggestions = widget.NewCheck("Suggestions", func(bool) { u.refreshBoxes(); u.giveKeysBack() })
	u.showSuggestions.SetChecked(true)
	u.guides = widget.NewCheck("Guides", func(on bool) {
		if u.view.Guides() != on {
			u.view.SetGuides(on)
		}
		u.giveKeysBack()
	})
	u.compareNote = widget.NewLabel("")
	u.compareNote.Wrapping = fyne.TextWrapWord
	u.compareBar = container.NewBorder(nil, nil, nil, widget.NewButtonWithIcon("Back to labelling", theme.NavigateBackIcon(), u.stopComparing), u.compareNote)
	u.compareBar.Hide()
	u.wireView()
	u.body = container.NewStack(u.welcome())
	u.win.SetContent(u.body)
	u.win.SetMainMenu(u.menu())
	u.win.Resize(fyne.NewSize(1280, 820))
	u.addShortcuts()
	u.win.SetCloseIntercept(u.askClose)
	return u
}

// askClose closes the window, unless edits could not be written: then it
// tries once more and asks before dropping them.
func (u *ui) askClose() {
	if u.sess == nil || u.sess.Unsaved() == 0 || u.sess.Flush(context.Background()) == nil {
		u.win.Close()
		return
	}
	dialog.ShowConfirm("Edits not saved",
		fmt.Sprintf("%s could not be written to the project file (%v).\n\nClose anyway and lose them?", ops.Plural(u.sess.Unsaved(), "edit"), u.sess.LastErr),
		func(lose bool) {
			if lose {
				u.win.Close()
			}
		}, u.win)
}

func (u *ui) menu() *fyne.MainMenu {
	// keyed items show their Ctrl shortcut in the menu (addShortcuts
	// binds the same keys on the window).
	keyed := func(label string, k fyne.KeyName, m fyne.KeyModifier, f func()) *fyne.MenuItem {
		it := fyne.NewMenuItem(label, f)
		it.Shortcut = &desktop.CustomShortcut{KeyName: k, Modifier: fyne.KeyModifierShortcutDefault | m}
		return it
	}
	// Only owners add images to a server project (applyRole).
	addFolder := keyed("Add image folder…", fyne.KeyI, 0, u.askAddFolder)
	addFiles := fyne.NewMenuItem("Add image files…", u.askAddFile)
	relink := fyne.NewMenuItem("Find moved images…", u.askRelink)
	handOut := fyne.NewMenuItem("Hand out images…", u.askHandOut)
	u.ownerItems = []*fyne.MenuItem{addFolder, addFiles, relink, handOut}
	file := fyne.NewMenu("Project",
		keyed("New project…", fyne.KeyN, 0, u.askNew),
		keyed("Open project…", fyne.KeyO, 0, u.askOpen),
		fyne.NewMenuItem("Open server project…", u.askOpenServer),
		fyne.NewMenuItemSeparator(),
		addFolder, addFiles, relink,
		fyne.NewMenuItemSeparator(),
		fyne.NewMenuItem("Change annotator…", u.askAnnotator),
		fyne.NewMenuItem("Image cache…", u.showImageCache),
	)
	edit := fyne.NewMenu("Edit",
		keyed("Undo", fyne.KeyZ, 0, u.undo),
		keyed("Redo", fyne.KeyZ, fyne.KeyModifierShift, u.redo),
		fyne.NewMenuItemSeparator(),
		fyne.NewMenuItem("Duplicate box (D)", u.duplicate),
		fyne.NewMenuItem("Delete box (Delete)", u.deleteSelected),
		keyed("Delete all my boxes on this image", fyne.KeyDelete, 0, u.deleteAll),
		fyne.NewMenuItem("Give all my boxes on this image the current class", func() { u.classAll(u.current) }),
	)
	images := fyne.NewMenu("Images",
		fyne.NewMenuItem("Next image (N)", func() { u.step(1) }),
		fyne.NewMenuItem("Previous image (B)", func() { u.step(-1) }),
		fyne.NewMenuItem("Next unfinished image (U)", u.nextUnfinished),
		fyne.NewMenuItem("Mark done and go on (Enter)", func() { u.markAndGo(project.StatusDone) }),
		fyne.NewMenuItem("Skip image (X)", func() { u.markAndGo(project.StatusSkipped) }),
		fyne.NewMenuItem("Mark in progress", func() { u.setStatus(project.StatusStarted) }),
		fyne.NewMenuItemSeparator(),
		fyne.NewMenuItem("First image (Home)", func() { u.selectIndex(0) }),
		fyne.NewMenuItem("Last image (End)", func() { u.selectIndex(len(u.images) - 1) }),
		fyne.NewMenuItemSeparator(),
		handOut,
	)
	view := fyne.NewMenu("View",
		fyne.NewMenuItem("Fit image to window (F)", u.view.FitToWindow),
		fyne.NewMenuItem("Actual pixels (R)", func() { u.view.TypedRune('r') }),
		fyne.NewMenuItem("Zoom in (+)", func() { u.view.TypedRune('+') }),
		fyne.NewMenuItem("Zoom out (−)", func() { u.view.TypedRune('-') }),
		fyne.NewMenuItem("Guide lines (G)", func() { u.view.TypedRune('g') }),
		fyne.NewMenuItem("Class-name tags (T)", func() { u.view.TypedRune('t') }),
		fyne.NewMenuItem("Other annotators' boxes (O)", func() { u.others.SetChecked(!u.others.Checked) }),
		fyne.NewMenuItemSeparator(),
		keyed("Show or hide the image list", fyne.KeyB, fyne.KeyModifierShift, func() { u.togglePanel(true) }),
		keyed("Show or hide the class panel", fyne.KeyK, fyne.KeyModifierShift, func() { u.togglePanel(false) }),
	)
	data := fyne.NewMenu("Dataset",
		keyed("Import labels…", fyne.KeyL, 0, u.askImport),
		keyed("Export dataset…", fyne.KeyE, 0, u.askExport),
		fyne.NewMenuItemSeparator(),
		keyed("Annotator agreement…", fyne.KeyG, 0, u.showAgreement),
	)
	// Only reviewers (and owners) decide suggestions in a server project.
	reviewing := []*fyne.MenuItem{
		fyne.NewMenuItem("Import predictions…", u.askImportSuggestions),
		fyne.NewMenuItem("Accept selected suggestion (A)", u.acceptSuggestion),
		fyne.NewMenuItem("Reject selected suggestion (Z)", u.rejectSuggestion),
		fyne.NewMenuItem("Accept all on this image above the threshold (Shift+A)", u.acceptAllAbove),
		fyne.NewMenuItem("Accept or reject many…", u.askBulkReview),
		fyne.NewMenuItem("Reject suggestions my boxes already cover…", u.askRejectCovered),
		keyed("Review one by one…", fyne.KeyR, 0, u.showReviewQueue),
		keyed("Review as a grid of crops…", fyne.KeyJ, 0, u.showCropGrid),
		fyne.NewMenuItem("Run a model…", u.askRunModel),
	}
	u.reviewerItems = reviewing
	sugg := fyne.NewMenu("Suggestions",
		reviewing[0],
		reviewing[8],
		keyed("Find objects like the selected box…", fyne.KeyF, 0, u.askFindSimilar),
		keyed("Train a detector on this project…", fyne.KeyT, 0, u.showTraining),
		fyne.NewMenuItemSeparator(),
		reviewing[1], reviewing[2], reviewing[3],
		fyne.NewMenuItem("Score threshold…", u.askSuggestionThreshold),
		reviewing[4], reviewing[5],
		fyne.NewMenuItem("Duplicate warning…", u.askDupIoU),
		fyne.NewMenuItemSeparator(),
		reviewing[6], reviewing[7],
		fyne.NewMenuItem("What the decisions tell us…", u.showSuggestionStats),
		fyne.NewMenuItem("Evaluate the model against ground truth…", u.showEvaluation),
	)
	help := fyne.NewMenu("Help",
		fyne.NewMenuItem("Keys and mouse (H)", u.showKeys),
		fyne.NewMenuItem("Cautions", u.showCautions),
		fyne.NewMenuItem("About Boxwright", u.showAbout),
	)
	return fyne.NewMainMenu(file, edit, images, view, sugg, data, help)
}

func (u *ui) welcome() fyne.CanvasObject {
	title := widget.NewLabelWithStyle("Boxwright", fyne.TextAlignCenter, fyne.TextStyle{Bold: true})
	intro := widget.NewLabel("Draw and check bounding boxes for object-detector datasets.\nOpen a project file (.boxw), start a new one, or try the invented harbour demo.")
	intro.Alignment = fyne.TextAlignCenter
	buttons := container.NewHBox(
		widget.NewButtonWithIcon("Open project…", theme.FolderOpenIcon(), u.askOpen),
		widget.NewButtonWithIcon("New project…", theme.DocumentCreateIcon(), u.askNew),
		widget.NewButtonWithIcon("Make demo project…", theme.MediaPhotoIcon(), u.askDemo),
	)
	caution := widget.NewLabel(cautionShort)
	caution.Wrapping = fyne.TextWrapWord
	caution.Alignment = fyne.TextAlignCenter
	return container.NewCenter(container.NewVBox(title, intro, container.NewCenter(buttons), widget.NewSeparator(),
		container.NewGridWrap(fyne.NewSize(640, 120), caution)))
}

func (u *ui) projectScreen() fyne.CanvasObject {
	u.leftPanel = container.NewBorder(container.NewVBox(u.summary, u.nav.filters()), nil, nil, nil, u.nav.list)
	tools := container.NewHBox(u.undoBtn, u.redoBtn, widget.NewSeparator(),
		widget.NewButtonWithIcon("", theme.ZoomFitIcon(), u.view.FitToWindow),
		widget.NewButton("1:1", func() { u.view.TypedRune('r') }),
		widget.NewButtonWithIcon("", theme.ZoomInIcon(), func() { u.view.TypedRune('+') }),
		widget.NewButtonWithIcon("", theme.ZoomOutIcon(), func() { u.view.TypedRune('-') }),
		u.zoom, widget.NewSeparator(), u.guides, u.others, u.showSuggestions, layout.NewSpacer(),
		widget.NewButtonWithIcon("Done", theme.ConfirmIcon(), func() { u.markAndGo(project.StatusDone) }),
		widget.NewButtonWithIcon("Keys", theme.HelpIcon(), u.showKeys))
	// On a narrow window the toolbar scrolls sideways instead of setting
	// the window's minimum width.
	toolbar := container.NewHScroll(tools)
	toolbar.SetMinSize(fyne.NewSize(0, tools.MinSize().Height))
	u.centre = container.NewBorder(container.NewVBox(toolbar, u.compareBar), nil, nil, nil, u.view)
	u.panels = container.NewStack()
	u.layoutPanels()
	bottom := container.NewBorder(nil, nil, nil, container.NewHBox(u.saved, u.retry), u.status)
	var top fyne.CanvasObject
	if u.readOnlyWhy != "" {
		msg := widget.NewLabel("Open for looking only — " + u.readOnlyWhy)
		msg.Wrapping = fyne.TextWrapWord
		msg.Importance = widget.WarningImportance
		u.banner = container.NewStack(fcanvas.NewRectangle(withAlpha(theme.Color(theme.ColorNameWarning), 0x40)), msg)
		top = u.banner
	}
	return container.NewBorder(top, bottom, nil, nil, u.panels)
}

// layoutPanels places the image list, the image and the class panel, as
// the person has chosen to show them (View ▸ Image list, Class panel);
// the dividers between them can be dragged.
func (u *ui) layoutPanels() {
	var o fyne.CanvasObject = u.centre
	if !u.hideClasses {
		inner := container.NewHSplit(u.centre, u.bar.Object())
		inner.Offset = 0.8
		o = inner
	}
	if !u.hideList {
		split := container.NewHSplit(u.leftPanel, o)
		split.Offset = 0.2
		o = split
	}
	u.panels.Objects = []fyne.CanvasObject{o}
	u.panels.Refresh()
}

// togglePanel shows or hides the image list (list) or the class panel.
func (u *ui) togglePanel(list bool) {
	if u.panels == nil {
		return
	}
	if list {
		u.hideList = !u.hideList
	} else {
		u.hideClasses = !u.hideClasses
	}
	u.layoutPanels()
}

// openProject closes any open project and shows the one at path.
func (u *ui) openProject(path string) error {
	why := ""
	s, err := backend.Open(path)
	if errors.Is(err, project.ErrReadOnly) || errors.Is(err, project.ErrDamaged) {
		// Still worth looking at: open it read-only and say why editing
		// is off.
		if ro, roErr := backend.OpenForReading(path); roErr == nil {
			s, why = ro, readOnlyReason(err, ro)
			err = nil
		}
	}
	if err != nil {
		return err
	}
	return u.showProject(path, s, why)
}

// showProject closes any open project and shows s, opened from path (a
// file, a postgres:// address or @NAME); why says why editing is off.
func (u *ui) showProject(path string, s backend.Project, why string) error {
	u.closeProject()
	u.st, u.raw, u.path, u.readOnlyWhy, u.countsMissing = traceWrites(s, u.trace), s, path, why, false
	if w, _ := backend.Locate(path); !w.IsServer() {
		projectFolder = filepath.Dir(path)
	}
	u.me, u.sess, u.current = project.Annotator{}, nil, 0
	if err := u.reload(); err != nil {
		return err
	}
	u.body.Objects = []fyne.CanvasObject{u.projectScreen()}
	u.body.Refresh()
	u.chooseAnnotator()
	u.updateTitle()
	u.updateUndo()
	if len(u.images) > 0 {
		u.selectIndex(0)
	} else {
		u.view.SetImage(nil)
		u.view.SetItems(nil)
		u.view.SetMessage("This project has no images yet: Project ▸ Add image folder… (Ctrl+I)")
	}
	u.pointer = ""
	u.updateStatus()
	u.reportMissing()
	u.applyRole(s)
	u.readAssignments()
	u.nav.reload()
	if w, ok := s.(watcher); ok {
		u.watchChanges(w)
	}
	return nil
}

func (u *ui) closeProject() {
	u.releaseClaim()
	if u.stopWatch != nil {
		u.stopWatch()
		u.stopWatch = nil
	}
	if u.cancelDecode != nil {
		u.cancelDecode()
	}
	if u.sess != nil && u.sess.Unsaved() > 0 {
		u.sess.Flush(context.Background()) // a last try; the error was shown already
	}
	u.sess = nil
	if u.st != nil {
		u.st.Close()
		u.st = nil
	}
	u.cache.Clear()
	u.selected, u.imageID = -1, 0
}

func (u *ui) updateTitle() {
	t := "Boxwright"
	if u.path != "" {
		t += " — " + filepath.Base(u.path)
	}
	if u.me.ID != 0 {
		t += " — labelling as " + u.me.Name
	}
	u.win.SetTitle(t)
}

// reload reads the image list, classes and counts again.
func (u *ui) reload() error {
	ctx := context.Background()
	// Statuses are the person's own; before anyone is chosen, the
	// furthest anyone has come.
	var ims []project.Image
	var err error
	if u.me.ID != 0 {
		ims, err = u.st.ImagesFor(ctx, u.me.ID)
	} else {
		ims, err = u.st.Images(ctx)
	}
	if err != nil {
		return err
	}
	// On a damaged project opened for looking, counts that sit on a
	// damaged page are left out rather than refusing the whole window:
	// the list, classes and annotators are what looking needs.
	per, err := u.st.CountsByImage(ctx)
	if err != nil && !u.unreadable(err) {
		return err
	}
	cs, err := u.st.Classes(ctx)
	if err != nil {
		return err
	}
	as, err := u.st.Annotators(ctx)
	if err != nil {
		return err
	}
	tal, err := u.st.LabelTallies(ctx)
	if err != nil && !u.unreadable(err) {
		return err
	}
	if per == nil {
		per = map[int64]project.ImageCounts{}
	}
	for id, c := range per {
		c.Labels = 0 // counted again from the tallies, which edits keep up to date
		per[id] = c
	}
	u.images, u.perImg, u.annotators, u.classes = ims, per, as, cs
	u.classBy = map[int64]project.Class{}
	for _, c := range cs {
		u.classBy[c.ID] = c
	}
	if _, ok := u.classBy[u.current]; !ok {
		u.current = 0
		if len(cs) > 0 {
			u.current = cs[0].ID // with no choice made, boxes get the first class
		}
	}
	u.byClass, u.byAnnotator, u.byPair, u.classTotal = map[int64]map[int64]int{}, map[int64]map[int64]int{}, map[int64]map[[2]int64]int{}, map[int64]int{}
	for _, t := range tal {
		u.tally(t.ImageID, t.ClassID, t.AnnotatorID, t.N)
	}
	u.updateSummary()
	u.nav.reload()
	u.updateClassBar()
	return nil
}

// updateSummary writes the project summary from the counts in memory,
// which every edit and decision keeps current.
func (u *ui) updateSummary() {
	labels, pending, mine := 0, 0, 0
	for _, c := range u.perImg {
		labels += c.Labels
		pending += c.Pending
	}
	for _, by := range u.byAnnotator {
		mine += by[u.me.ID]
	}
	var parts []string
	byStatus := map[project.ImageStatus]int{}
	for _, im := range u.images {
		byStatus[im.Status]++
	}
	for _, st := range project.ImageStatuses {
		if n := byStatus[st]; n > 0 {
			parts = append(parts, fmt.Sprintf("%d %s", n, statusWord(st)))
		}
	}
	labelText, mineText := ops.Plural(labels, "label"), ops.Plural(mine, "label")
	if u.countsMissing {
		labelText, mineText = "labels not counted (damaged file)", "labels not counted"
	}
	text := fmt.Sprintf("%s, %s, %s", ops.Plural(len(u.images), "image"), labelText, ops.Plural(pending, "pending suggestion"))
	if u.me.ID != 0 {
		text += fmt.Sprintf("\n%s: %s", u.me.Name, mineText)
		if len(parts) > 0 {
			text += " · " + strings.Join(parts, " · ")
		}
	} else if len(parts) > 0 {
		text += "\n" + strings.Join(parts, " · ")
	}
	u.summary.SetText(text)
}

// tally adds n labels of a class by an annotator on an image to the
// counts behind the class bar, the filters and the image rows.
func (u *ui) tally(imageID, classID, annotatorID int64, n int) {
	if u.byClass[imageID] == nil {
		u.byClass[imageID], u.byAnnotator[imageID], u.byPair[imageID] = map[int64]int{}, map[int64]int{}, map[[2]int64]int{}
	}
	u.byPair[imageID][[2]int64{classID, annotatorID}] += n
	u.byClass[imageID][classID] += n
	u.byAnnotator[imageID][annotatorID] += n
	u.classTotal[classID] += n
	c := u.perImg[imageID]
	c.Labels += n
	if u.perImg == nil {
		u.perImg = map[int64]project.ImageCounts{}
	}
	u.perImg[imageID] = c
}

// statusWord is how the screen names an image status.
func statusWord(s project.ImageStatus) string {
	switch s {
	case project.StatusNew:
		return "not started"
	case project.StatusStarted:
		return "in progress"
	}
	return string(s)
}

func (u *ui) showError(err error) { dialog.ShowError(err, u.win) }

// haveProject says whether a project is open, and tells the user to open
// one when it is not.
func (u *ui) haveProject() bool {
	if u.st == nil {
		dialog.ShowInformation("No project", "Open or create a project first.", u.win)
	}
	return u.st != nil
}

// unreadable says whether err is a damaged page met while looking at a
// project already open as damaged; the status line then says that some
// counts could not be read.
func (u *ui) unreadable(err error) bool {
	if !errors.Is(err, project.ErrDamaged) || u.st == nil || u.st.Damage() == "" {
		return false
	}
	if !u.countsMissing {
		u.countsMissing = true
		u.readOnlyWhy += " Some label counts sit on a damaged page and are not shown."
	}
	return true
}

// readOnlyReason says in plain words why a project opened read-only.
func readOnlyReason(err error, s backend.Project) string {
	if errors.Is(err, project.ErrDamaged) {
		return fmt.Sprintf("the project file is damaged (%s), so nothing is written to it. "+
			"`boxwright recover` copies what can still be read into a new project.", s.Damage())
	}
	return "you cannot write to this project file or its folder (permissions or a read-only disk), so editing is off. " +
		"Copy the project somewhere you can write to, or ask for write permission, to edit it."
}

func withAlpha(c color.Color, a uint8) color.NRGBA {
	n := color.NRGBAModel.Convert(c).(color.NRGBA)
	n.A = a
	return n
}
