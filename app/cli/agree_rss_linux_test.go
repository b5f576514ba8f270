package cli

import (
	"bufio"
	"fmt"
	"os"
	"regexp"
	"strconv"
	"strings"
)

// agreePeakRSS runs the agree command once in a process of its own and
// returns that process's peak resident memory in MiB, which it reads
// itself (VmHWM in /proc/self/status, proc(5)): getrusage(2) would count
// the parent's memory too, as the child started in it (fork, then exec).
func agreePeakRSS(args []string) (float64, bool, error) {
	out, err := agreeChildCommand(args).CombinedOutput()
	if err != nil {
		return 0, false, fmt.Errorf("agree in a process of its own: %w\n%s", err, out)
	}
	m := regexp.MustCompile(`peak-rss-kib (\d+)`).FindSubmatch(out)
	if m == nil {
		return 0, false, nil
	}
	kib, _ := strconv.ParseFloat(string(m[1]), 64)
	return kib / 1024, true, nil
}

// reportPeakRSS prints the peak resident memory of this process for
// agreePeakRSS.
func reportPeakRSS() {
	f, err := os.Open("/proc/self/status")
	if err != nil {
		return
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if v, ok := strings.CutPrefix(sc.Text(), "VmHWM:"); ok {
			fmt.Printf("peak-rss-kib %s\n", strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(v), "kB")))
		}
	}
}
