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

// roundPoint rounds every continuous value to 6 significant digits, so
// that the value gated is exactly the value written and read back by the
// instrument. Integers, levels and categories are exact already.
func roundPoint(space campaign.Space, p campaign.Point) campaign.Point {
	out := make(campaign.Point, len(p))
	for i, v := range p {
		out[i] = v
		if i < len(space) && (space[i].Kind == "" || space[i].Kind == campaign.Continuous) {
			out[i], _ = strconv.ParseFloat(strconv.FormatFloat(v, 'g', 6, 64), 64)
		}
	}
	return out
}

// renderHandoff returns the content of a setpoint file: a CSV header row
// and one data row, or a JSON object. Both carry the handoff's action id
// (the last CSV column, "action").
func renderHandoff(space campaign.Space, sp campaign.Setpoint, format, actionID string) ([]byte, error) {
	if err := sp.Validate(space); err != nil {
		return nil, err
	}
	switch format {
	case HandoffCSV:
		var b bytes.Buffer
		w := csv.NewWriter(&b)
		header := append(append([]string{"run"}, space.Names()...), "action")
		row := []string{sp.RunID}
		for i, v := range sp.Point {
			row = append(row, space[i].Format(v))
		}
		row = append(row, actionID)
		if err := w.WriteAll([][]string{header, row}); err != nil {
			return nil, err
		}
		return b.Bytes(), nil
	case HandoffJSON:
		type value struct {
			Name     string  `json:"name"`
			Value    float64 `json:"value"`
			Category string  `json:"category,omitempty"`
			Unit     string  `json:"unit,omitempty"`
		}
		doc := struct {
			Run       string  `json:"run"`
			Action    string  `json:"action"`
			Setpoints []value `json:"setpoints"`
		}{Run: sp.RunID, Action: actionID}
		for i, f := range space {
			if math.IsNaN(sp.Point[i]) {
				return nil, fmt.Errorf("handoff %s: NaN for %s", sp.RunID, f.Name)
			}
			v := value{Name: f.Name, Value: sp.Point[i], Unit: f.Unit}
			if f.Kind == campaign.Categorical {
				v.Category = f.Format(sp.Point[i])
			}
			doc.Setpoints = append(doc.Setpoints, v)
		}
		out, err := json.MarshalIndent(doc, "", "  ")
		return append(out, '\n'), err
	}
	return nil, fmt.Errorf("handoff: unknown format %q", format)
}
