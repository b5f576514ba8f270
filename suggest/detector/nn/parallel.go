package nn

import (
	"sync"
	"sync/atomic"
)

// parallelFor calls f on consecutive ranges [lo, hi) that cover 0..n-1,
// each at most grain long, from up to nt goroutines (the caller's among
// them). Ranges are handed out as goroutines free up, so a core slowed by
// other work takes fewer; callers must make each range's result independent
// of which goroutine runs it.
func parallelFor(n, nt, grain int, f func(lo, hi int)) {
	if n <= 0 {
		return
	}
	grain = max(grain, 1)
	chunks := ceilDiv(n, grain)
	nt = min(nt, chunks)
	if nt <= 1 {
		f(0, n)
		return
	}
	var next atomic.Int64
	work := func() {
		for {
			i := int(next.Add(1)) - 1
			if i >= chunks {
				return
			}
			f(i*grain, min(n, (i+1)*grain))
		}
	}
	var wg sync.WaitGroup
	for range nt - 1 {
		wg.Go(work)
	}
	work()
	wg.Wait()
}

// grainFor splits n items into about four ranges per goroutine, so that
// uneven cores even out, but no range shorter than least.
func grainFor(n, nt, least int) int {
	return max(least, ceilDiv(n, 4*max(nt, 1)))
}
