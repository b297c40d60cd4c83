package agent

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"strconv"

	"benchtender/campaign"
)

// handoffName is the file name of a run's setpoint file.
func handoffName(runID, format string) string { return runID + "." + format }

// roundPoint rounds every value to 6 significant digits, so that the value
// gated is exactly the value written and read back by the instrument.
func roundPoint(p campaign.Point) campaign.Point {
	out := make(campaign.Point, len(p))
	for i, v := range p {
		out[i], _ = strconv.ParseFloat(strconv.FormatFloat(v, 'g', 6, 64), 64)
	}
	return out
}

// renderHandoff returns the content of a setpoint file: a CSV header row
// and one data row, or a JSON object.
func renderHandoff(space campaign.Space, sp campaign.Setpoint, format string) ([]byte, error) {
	if err := sp.Validate(space); err != nil {
		return nil, err
	}
	num := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	switch format {
	case HandoffCSV:
		var b bytes.Buffer
		w := csv.NewWriter(&b)
		header := append([]string{"run"}, space.Names()...)
		row := []string{sp.RunID}
		for _, v := range sp.Point {
			row = append(row, num(v))
		}
		if err := w.WriteAll([][]string{header, row}); err != nil {
			return nil, err
		}
		return b.Bytes(), nil
	case HandoffJSON:
		type value struct {
			Name  string  `json:"name"`
			Value float64 `json:"value"`
			Unit  string  `json:"unit,omitempty"`
		}
		doc := struct {
			Run       string  `json:"run"`
			Setpoints []value `json:"setpoints"`
		}{Run: sp.RunID}
		for i, f := range space {
			if math.IsNaN(sp.Point[i]) {
				return nil, fmt.Errorf("handoff %s: NaN for %s", sp.RunID, f.Name)
			}
			doc.Setpoints = append(doc.Setpoints, value{f.Name, sp.Point[i], f.Unit})
		}
		out, err := json.MarshalIndent(doc, "", "  ")
		return append(out, '\n'), err
	}
	return nil, fmt.Errorf("handoff: unknown format %q", format)
}
