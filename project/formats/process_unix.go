//go:build unix

package formats

import (
	"errors"
	"syscall"
)

// processGone says whether no process pid exists on this machine; when it
// cannot tell (no permission to ask) it says false.
func processGone(pid int) bool {
	if pid <= 0 {
		return false
	}
	return errors.Is(syscall.Kill(pid, 0), syscall.ESRCH)
}
