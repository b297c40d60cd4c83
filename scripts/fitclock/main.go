// Command fitclock times planner/gp's hyperparameter fit on data sets
// given as JSON ({"x": [[...]], "y": [...]}) on standard input, one set per
// line, and prints the median wall time of each in milliseconds, one per
// line. It is the Go half of scripts/gp-vs-sklearn.sh.
package main

import (
	"bufio"
	"encoding/json"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"sort"
	"time"

	"benchtender/planner/gp"
)

func main() {
	repeats := flag.Int("repeats", 5, "fits per data set; the median is printed")
	restarts := flag.Int("restarts", 1, "random starts besides the default one")
	flag.Parse()
	sc := bufio.NewScanner(os.Stdin)
	sc.Buffer(make([]byte, 1<<20), 1<<30)
	for sc.Scan() {
		var set struct {
			X [][]float64 `json:"x"`
			Y []float64   `json:"y"`
		}
		if err := json.Unmarshal(sc.Bytes(), &set); err != nil {
			fmt.Fprintln(os.Stderr, "fitclock:", err)
			os.Exit(1)
		}
		times := make([]float64, *repeats)
		var lml float64
		for r := range times {
			start := time.Now()
			m, err := gp.Fit(set.X, set.Y, gp.FitOptions{Starts: *restarts, Rand: rand.New(rand.NewPCG(uint64(r), 1))})
			if err != nil {
				fmt.Fprintln(os.Stderr, "fitclock:", err)
				os.Exit(1)
			}
			times[r] = float64(time.Since(start).Microseconds()) / 1000
			lml = m.LogMarginalLikelihood()
		}
		sort.Float64s(times)
		fmt.Printf("%.1f %.4f\n", times[len(times)/2], lml)
	}
	if err := sc.Err(); err != nil {
		fmt.Fprintln(os.Stderr, "fitclock:", err)
		os.Exit(1)
	}
}
