// Package pool runs the benchmark scripts' campaigns on several cores at
// once, with a progress line per campaign.
package pool

import (
	"fmt"
	"io"
	"sync"
	"time"
)

// Run calls do(i) for every i below n, on workers goroutines at once
// (at least one). As each call returns, a line on progress says how many
// are done, the time so far, about how much is left, and what do
// returned about it. Each call must write only its own results.
func Run(n, workers int, do func(i int) string, progress io.Writer) {
	next := make(chan int)
	var wg sync.WaitGroup
	var mu sync.Mutex
	done := 0
	start := time.Now()
	for w := 0; w < max(1, workers); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				what := do(i)
				mu.Lock()
				done++
				el := time.Since(start)
				eta := time.Duration(float64(el) / float64(done) * float64(n-done))
				fmt.Fprintf(progress, "%d/%d campaigns, %s elapsed, about %s left: %s\n", done, n, el.Round(time.Second), eta.Round(time.Second), what)
				mu.Unlock()
			}
		}()
	}
	for i := 0; i < n; i++ {
		next <- i
	}
	close(next)
	wg.Wait()
}
