package gui

import (
	"context"
	"fmt"
	"os"
	"path/filepath"

	"fyne.io/fyne/v2/dialog"

	"boxwright/app/backend"
	"boxwright/app/ops"
	"boxwright/project"
)

// reportMissing offers to look for moved image files by their content.
func (u *ui) reportMissing() {
	missing, err := u.st.MissingImages(context.Background())
	if err != nil || len(missing) == 0 {
		return
	}
	msg := fmt.Sprintf("%s of this project cannot be found where the project expects them (for example %s).\n\nLook for them in a folder? Files are matched by their content, so renamed files are found too.",
		ops.Plural(len(missing), "image file"), missing[0].Path)
	dialog.ShowConfirm("Images missing", msg, func(ok bool) {
		if ok {
			u.askRelink()
		}
	}, u.win)
}

func (u *ui) askOpen() {
	showFileOpen(u.win, "Open a project", []string{backend.Extension}, func(path string) {
		if err := u.openProject(path); err != nil {
			u.showError(err)
		}
	})
}

func (u *ui) askDemo() {
	showFolderOpen(u.win, "Folder to make the demo project in", "Make it here", func(parent string) {
		dir := filepath.Join(parent, "boxwright-demo")
		path := filepath.Join(dir, ops.DemoProjectName)
		if _, err := os.Stat(path); err == nil {
			if err := u.openProject(path); err != nil {
				u.showError(err)
			}
			return
		}
		u.runJob("Making the demo project", func(ctx context.Context, progress func(float64)) error {
			return ops.MakeDemo(ctx, dir, ops.DemoDefaults, func(done, total int) { progress(float64(done) / float64(total)) })
		}, func() {
			if err := u.openProject(path); err != nil {
				u.showError(err)
			}
		})
	})
}

func (u *ui) askAddFolder() {
	if !u.haveProject() {
		return
	}
	showFolderOpen(u.win, "Add a folder of images", "Add", func(dir string) { u.intake([]string{dir}, false) })
}

func (u *ui) askAddFile() {
	if !u.haveProject() {
		return
	}
	showFileOpen(u.win, "Add an image file", []string{".jpg", ".jpeg", ".png", ".gif", ".bmp", ".tif", ".tiff", ".webp"}, func(path string) {
		u.intake([]string{path}, false)
	})
}

func (u *ui) askRelink() {
	if u.st == nil {
		return
	}
	showFolderOpen(u.win, "Look for moved images in a folder", "Search", func(dir string) { u.intake([]string{dir}, true) })
}

// intake adds (or, with relinkOnly, finds) images as a background job and
// shows the summary.
func (u *ui) intake(paths []string, relinkOnly bool) {
	st := u.st
	var rep project.IntakeReport
	title := "Adding images"
	if relinkOnly {
		title = "Looking for moved images"
	}
	u.runJob(title, func(ctx context.Context, progress func(float64)) error {
		var err error
		rep, err = st.AddImages(ctx, paths, project.IntakeOptions{RelinkOnly: relinkOnly,
			Progress: func(done, total int) { progress(float64(done) / float64(total)) }})
		return err
	}, func() {
		if err := u.reload(); err != nil {
			u.showError(err)
		}
		if u.selected < 0 && len(u.images) > 0 {
			u.selectIndex(0)
		}
		msg := fmt.Sprintf("Added %d, already known %d, relinked %d, skipped %d.", rep.Added, rep.Duplicates, rep.Relinked, len(rep.Failed))
		for i, f := range rep.Failed {
			if i == 10 {
				msg += fmt.Sprintf("\n… and %d more", len(rep.Failed)-10)
				break
			}
			msg += fmt.Sprintf("\n• %s: %s", filepath.Base(f.Path), f.Error)
		}
		dialog.ShowInformation(title, msg, u.win)
	})
}
