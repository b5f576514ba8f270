package cli

import (
	"fmt"
	"syscall"
)

// agreePeakRSS runs the agree command once in a process of its own and
// returns that process's peak resident memory in MiB (getrusage(2):
// ru_maxrss, in KiB on Linux).
func agreePeakRSS(args []string) (float64, bool, error) {
	cmd := agreeChildCommand(args)
	if out, err := cmd.CombinedOutput(); err != nil {
		return 0, false, fmt.Errorf("agree in a process of its own: %w\n%s", err, out)
	}
	ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage)
	if !ok {
		return 0, false, nil
	}
	return float64(ru.Maxrss) / 1024, true, nil
}
