package sim

import (
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"benchtender/campaign"
)

// Instrument is a simulated instrument.
type Instrument struct {
	// HandoffDir is where it looks for setpoint files (CSV, a header row
	// "run,<factor>..." and one data row).
	HandoffDir string
	// ExportDir is where it writes result files.
	ExportDir string
	// Factors are the factors in the order the result file echoes them;
	// Columns are the result file's column titles for them.
	Factors campaign.Space
	Columns []string
	// Law gives the true response at a setpoint.
	Law func(campaign.Point) float64
	// Noise is the standard deviation of the measurement noise.
	Noise float64
	// Delay is how long a batch takes; Poll how often the handoff folder
	// is read.
	Delay, Poll time.Duration
	Seed        uint64
	// Name is the instrument's name in the preamble.
	Name string
	// Extra are further measured values, each written as a column after
	// the unit column.
	Extra []Output
}

// Output is a further value the instrument measures.
type Output struct {
	Column string
	// Law gives the true value at a setpoint; Noise is its measurement
	// noise (one standard deviation). Readings are never negative.
	Law   func(campaign.Point) float64
	Noise float64
}

// Run works until ctx is done. Each setpoint file is taken (moved into
// HandoffDir/taken, as a real instrument's software removes what it has
// read), run, and answered by one result file.
func (in *Instrument) Run(ctx context.Context) error {
	rng := rand.New(rand.NewPCG(in.Seed, 7))
	taken := filepath.Join(in.HandoffDir, "taken")
	if err := os.MkdirAll(taken, 0o755); err != nil {
		return err
	}
	poll := in.Poll
	if poll <= 0 {
		poll = 50 * time.Millisecond
	}
	tick := time.NewTicker(poll)
	defer tick.Stop()
	for {
		select {
		case <-ctx.Done():
			return nil
		case <-tick.C:
		}
		names, err := in.waiting()
		if err != nil {
			return err
		}
		for _, name := range names {
			if err := in.runOne(ctx, name, taken, rng); err != nil {
				if ctx.Err() != nil {
					return nil
				}
				return err
			}
		}
	}
}

// waiting lists setpoint files, ignoring hidden and temporary names as
// instrument software does.
func (in *Instrument) waiting() ([]string, error) {
	entries, err := os.ReadDir(in.HandoffDir)
	if err != nil {
		return nil, err
	}
	var out []string
	for _, e := range entries {
		n := e.Name()
		if e.Type().IsRegular() && strings.HasSuffix(n, ".csv") && !strings.HasPrefix(n, ".") {
			out = append(out, n)
		}
	}
	sort.Strings(out)
	return out, nil
}

func (in *Instrument) runOne(ctx context.Context, name, taken string, rng *rand.Rand) error {
	path := filepath.Join(in.HandoffDir, name)
	run, pt, err := in.readSetpoint(path)
	if err != nil {
		return fmt.Errorf("sim: %s: %w", name, err)
	}
	if err := os.Rename(path, filepath.Join(taken, name)); err != nil {
		return fmt.Errorf("sim: take %s: %w", name, err)
	}
	// Every setpoint taken is logged, so that a test can tell whether a
	// run was ever sent twice.
	if f, err := os.OpenFile(filepath.Join(in.HandoffDir, "taken.log"), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644); err == nil {
		fmt.Fprintf(f, "%s\n", run)
		f.Close()
	}
	select {
	case <-ctx.Done():
		return ctx.Err()
	case <-time.After(in.Delay):
	}
	// The simulated reading is never negative: an instrument reports no
	// colour as 0, not as a negative strength (the demo's response has a
	// physical range that starts at 0).
	value := math.Max(0, in.Law(pt)+in.Noise*rng.NormFloat64())
	extra := make([]float64, len(in.Extra))
	for i, o := range in.Extra {
		extra[i] = math.Max(0, o.Law(pt)+o.Noise*rng.NormFloat64())
	}
	return in.writeResult(ctx, run, pt, value, extra)
}

func (in *Instrument) readSetpoint(path string) (string, campaign.Point, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", nil, err
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		return "", nil, err
	}
	if len(rows) != 2 || len(rows[0]) < len(in.Factors)+1 || len(rows[1]) != len(rows[0]) {
		return "", nil, errors.New("want a header row and one data row with run and every factor")
	}
	pt := make(campaign.Point, len(in.Factors))
	for i, f := range in.Factors {
		col := -1
		for j, h := range rows[0] {
			if h == f.Name {
				col = j
			}
		}
		if col < 0 {
			return "", nil, fmt.Errorf("no column %q", f.Name)
		}
		v, err := strconv.ParseFloat(rows[1][col], 64)
		if err != nil {
			return "", nil, err
		}
		pt[i] = v
	}
	return rows[1][0], pt, nil
}

// writeResult writes the export in two pieces with a pause between, like
// instrument software that writes its preamble first.
func (in *Instrument) writeResult(ctx context.Context, run string, pt campaign.Point, value float64, extra []float64) error {
	comma := func(v float64, prec int) string {
		return strings.Replace(strconv.FormatFloat(v, 'f', prec, 64), ".", ",", 1)
	}
	now := time.Now()
	var head strings.Builder
	fmt.Fprintf(&head, "Instrument: %s (SIMULATED, invented data)\r\n", in.Name)
	fmt.Fprintf(&head, "Operator: night shift\r\n")
	fmt.Fprintf(&head, "Date: %s\r\n", now.Format("02.01.2006 15:04:05"))
	fmt.Fprintf(&head, "Method: OCHRE-7 batch\r\n")
	cols := append([]string{"Sample"}, in.Columns...)
	cols = append(cols, "Strength", "Unit")
	for _, o := range in.Extra {
		cols = append(cols, o.Column)
	}
	head.WriteString(strings.Join(cols, ";") + "\r\n")
	row := []string{run}
	for _, v := range pt {
		row = append(row, comma(v, 3))
	}
	row = append(row, comma(value, 2), "%")
	for _, v := range extra {
		row = append(row, comma(v, 3))
	}
	body := strings.Join(row, ";") + "\r\n"

	name := fmt.Sprintf("BR2_%s_%s.csv", run, now.Format("20060102_150405"))
	path := filepath.Join(in.ExportDir, name)
	f, err := os.OpenFile(path, os.O_CREATE|os.O_WRONLY|os.O_TRUNC, 0o644)
	if err != nil {
		return err
	}
	if _, err := f.WriteString(head.String()); err != nil {
		f.Close()
		return err
	}
	select {
	case <-ctx.Done():
	case <-time.After(40 * time.Millisecond):
	}
	if _, err := f.WriteString(body); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
