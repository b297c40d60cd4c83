// Command fitclock times planner/gp's hyperparameter fit on data sets
// given as JSON ({"x": [[...]], "y": [...]}) on standard input, one set per
// line, and prints for each the median wall time in milliseconds, the log
// marginal likelihood and the fit's objective (gp.Model.LogPosterior)
// reached, one line per set. When the set carries another library's fitted
// Matérn 5/2 hyperparameters on the standardised response ("other":
// {"length_scales": [...], "signal": s², "noise": σ²}), it also prints our
// objective at them, so both are scored alike. It is the Go half of
// scripts/gp-vs-sklearn.sh.
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
			X     [][]float64 `json:"x"`
			Y     []float64   `json:"y"`
			Other *struct {
				LengthScales []float64 `json:"length_scales"`
				Signal       float64   `json:"signal"`
				Noise        float64   `json:"noise"`
			} `json:"other"`
		}
		if err := json.Unmarshal(sc.Bytes(), &set); err != nil {
			fmt.Fprintln(os.Stderr, "fitclock:", err)
			os.Exit(1)
		}
		times := make([]float64, *repeats)
		var lml, post float64
		for r := range times {
			start := time.Now()
			m, err := gp.Fit(set.X, set.Y, gp.FitOptions{Starts: *restarts, Rand: rand.New(rand.NewPCG(uint64(r), 1))})
			if err != nil {
				fmt.Fprintln(os.Stderr, "fitclock:", err)
				os.Exit(1)
			}
			times[r] = float64(time.Since(start).Microseconds()) / 1000
			lml, post = m.LogMarginalLikelihood(), m.LogPosterior()
		}
		sort.Float64s(times)
		other := "-"
		if o := set.Other; o != nil {
			m, err := gp.New(set.X, set.Y, gp.Params{Kernel: gp.Matern52, LengthScales: o.LengthScales, SignalVar: o.Signal, NoiseVar: o.Noise})
			if err != nil {
				fmt.Fprintln(os.Stderr, "fitclock: the other library's hyperparameters:", err)
				os.Exit(1)
			}
			other = fmt.Sprintf("%.4f", m.LogPosterior())
		}
		fmt.Printf("%.1f %.4f %.4f %s\n", times[len(times)/2], lml, post, other)
	}
	if err := sc.Err(); err != nil {
		fmt.Fprintln(os.Stderr, "fitclock:", err)
		os.Exit(1)
	}
}
