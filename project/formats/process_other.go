//go:build !unix

package formats

// processGone cannot tell here, so a partial folder is never taken for a
// crashed export's.
func processGone(pid int) bool { return false }
