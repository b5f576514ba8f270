package gui

import (
	"context"
	"fmt"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/dialog"

	"boxwright/app/ops"
)

func (u *ui) flush() {
	if u.sess == nil {
		return
	}
	if err := u.sess.Flush(context.Background()); err != nil {
		u.saveFailed(err)
		return
	}
	u.savedNow()
}

// retryEvery is how often unwritten edits are tried again by themselves.
var retryEvery = 10 * time.Second

// scheduleRetry tries the queued writes again after a while, quietly
// (the failure was shown once), until they are written.
func (u *ui) scheduleRetry() {
	if u.retrying {
		return
	}
	u.retrying = true
	sess := u.sess
	time.AfterFunc(retryEvery, func() {
		fyne.Do(func() {
			u.retrying = false
			if u.st == nil || u.sess == nil || u.sess != sess || sess.Unsaved() == 0 {
				return
			}
			if err := sess.Flush(context.Background()); err != nil {
				u.saved.SetText(fmt.Sprintf("⚠ NOT SAVED: %s waiting; trying again every %d s", ops.Plural(sess.Unsaved(), "edit"), int(retryEvery.Seconds())))
				u.scheduleRetry()
				return
			}
			u.savedNow()
		})
	})
}

// savedNow shows the quiet indicator.
func (u *ui) savedNow() {
	if u.sess != nil && u.sess.Unsaved() > 0 {
		return
	}
	u.trace.ack(u) // the kill test's record of what "saved" promises; nil unless tracing
	u.saved.SetText("✓ saved " + time.Now().Format("15:04:05"))
	u.retry.Hide()
}

// saveFailed says clearly that an edit is not on disk yet; the edit stays
// on screen and in the queue, and is written on the next edit or retry.
func (u *ui) saveFailed(err error) {
	n := 0
	if u.sess != nil {
		n = u.sess.Unsaved()
	}
	u.saved.SetText(fmt.Sprintf("⚠ NOT SAVED: %s waiting", ops.Plural(n, "edit")))
	u.retry.Show()
	u.scheduleRetry()
	dialog.ShowError(fmt.Errorf("%w\n\nYour edits are kept in this window and will be written when saving works again (free some disk space or make the project file writable, then press Retry saving). Do not close Boxwright until the status says saved", err), u.win)
}
