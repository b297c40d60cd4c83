// Package export gives a campaign's runs as data for a spreadsheet or a
// notebook: one row per run with the factors in their units, every value
// and derived value the result file gave, the status and why, the result
// files with their SHA-256 and revisions, the handoff, and every sign-off.
//
// CSV follows RFC 4180 (comma-separated, CRLF line ends, fields quoted
// when they hold a comma, quote or line break, quotes doubled), in UTF-8
// without a byte-order mark, with one header row that names each column's
// unit in square brackets. JSON carries the same, numbers as numbers.
//
// It reads the journal only; it writes nothing but what it is given.
package export

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"slices"
	"sort"
	"strconv"
	"strings"
	"time"

	"benchtender/agent"
	"benchtender/campaign"
	"benchtender/record"
)

// Document is the campaign's runs as data.
type Document struct {
	Campaign string    `json:"campaign"`
	Exported time.Time `json:"exported"`
	Software string    `json:"software,omitempty"`
	// Factors and Values name each column with its unit, in order: the
	// campaign's response first, then every other value read.
	Factors []Column `json:"factors"`
	Values  []Column `json:"values"`
	Runs    []Run    `json:"runs"`
}

// Column is a named quantity and its unit.
type Column struct {
	Name string `json:"name"`
	Unit string `json:"unit,omitempty"`
}

// Run is one row.
type Run struct {
	Run    string `json:"run"`
	Status string `json:"status"`
	// Reason says why a run failed, was held, refused, rejected or
	// lapsed ("" when it simply ran).
	Reason   string     `json:"reason,omitempty"`
	Method   string     `json:"method,omitempty"`
	Proposed *time.Time `json:"proposed,omitempty"`
	// Setpoint maps each factor to its value in its unit (a categorical
	// factor's category name).
	Setpoint map[string]any `json:"setpoint"`
	// Values are the latest result's values, by name (units in
	// Document.Values).
	Values     map[string]float64 `json:"values,omitempty"`
	Files      []File             `json:"files,omitempty"`
	HandedOff  *time.Time         `json:"handed_off,omitempty"`
	Handoff    string             `json:"handoff_file,omitempty"`
	Instrument string             `json:"instrument,omitempty"`
	Signoffs   []Signoff          `json:"signoffs,omitempty"`
	// External marks a run that came from a result file alone.
	External bool `json:"external,omitempty"`
}

// File is one result file ingested for a run; the highest revision counts.
type File struct {
	Path     string    `json:"path"`
	SHA256   string    `json:"sha256"`
	Revision int       `json:"revision"`
	Ingested time.Time `json:"ingested"`
}

// Signoff is one person's decision on the run.
type Signoff struct {
	By      string    `json:"by"`
	Name    string    `json:"name"`
	Meaning string    `json:"meaning"`
	Reason  string    `json:"reason"`
	Time    time.Time `json:"time"`
	// Values are the edited values signed, when not the proposed ones.
	Values map[string]any `json:"values,omitempty"`
}

// Build reads the runs out of the journal's entries.
func Build(cfg agent.Config, entries []record.Entry, now time.Time, software string) Document {
	space := cfg.Campaign.Factors
	st := record.Replay(entries)
	doc := Document{Campaign: cfg.Campaign.Name, Exported: now.UTC(), Software: software}
	for _, f := range space {
		doc.Factors = append(doc.Factors, Column{f.Name, f.Unit})
	}
	units := map[string]string{}
	byRun := map[string]*Run{}
	var runs []*Run
	for _, id := range st.Order {
		r := st.Runs[id]
		row := &Run{Run: r.ID, Status: r.Status, Method: r.Method, External: r.External, Instrument: r.Instrument}
		if !r.Proposed.IsZero() {
			t := r.Proposed.UTC()
			row.Proposed = &t
		}
		row.Setpoint = setpoint(space, r.Point)
		switch r.Status {
		case record.StatusFailed:
			row.Reason = r.Failed
		case record.StatusHeld, record.StatusRefused:
			row.Reason = r.Decision.Summary()
		}
		runs = append(runs, row)
		byRun[id] = row
	}
	for _, e := range entries {
		row := byRun[e.Run]
		if row == nil {
			continue
		}
		switch e.Kind {
		case record.KindIngest:
			row.Files = append(row.Files, File{Path: e.File, SHA256: e.SHA256, Revision: len(row.Files) + 1, Ingested: e.Time.UTC()})
			row.Values = map[string]float64{}
			if e.Failed == "" {
				row.Values[cfg.Campaign.Response.Name] = e.Value
				units[cfg.Campaign.Response.Name] = cfg.Campaign.Response.Unit
			}
			for name, v := range e.Values {
				row.Values[name] = v.Value
				if _, ok := units[name]; !ok || units[name] == "" {
					units[name] = v.Unit
				}
			}
		case record.KindHandoffOK:
			t := e.Time.UTC()
			row.HandedOff, row.Handoff = &t, e.File
		case record.KindSignoff:
			s := Signoff{By: e.By, Name: e.Name, Reason: e.Reason, Time: e.Time.UTC(), Meaning: e.SignoffMeaning()}
			if len(e.Point) > 0 {
				s.Values = setpoint(space, e.Point)
			}
			row.Signoffs = append(row.Signoffs, s)
			if e.Action == record.ActionReject {
				row.Reason = "rejected by " + e.By + ": " + e.Reason
			}
		case record.KindExpire:
			row.Reason = e.Reason
		}
	}
	for _, r := range runs {
		doc.Runs = append(doc.Runs, *r)
	}
	resp := cfg.Campaign.Response.Name
	names := make([]string, 0, len(units))
	for n := range units {
		if n != resp {
			names = append(names, n)
		}
	}
	sort.Strings(names)
	doc.Values = append(doc.Values, Column{resp, cfg.Campaign.Response.Unit})
	for _, n := range names {
		doc.Values = append(doc.Values, Column{n, units[n]})
	}
	return doc
}

func setpoint(space campaign.Space, p campaign.Point) map[string]any {
	out := map[string]any{}
	for i, f := range space {
		if i >= len(p) {
			break
		}
		if f.Kind == campaign.Categorical {
			out[f.Name] = f.Format(p[i])
		} else {
			out[f.Name] = p[i]
		}
	}
	return out
}

// WriteJSON writes the document as indented JSON.
func (d Document) WriteJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	if err := enc.Encode(d); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	return nil
}

// Header is the CSV header row.
func (d Document) Header() []string {
	h := []string{"run", "status", "reason", "method", "proposed (UTC)"}
	for _, c := range d.Factors {
		h = append(h, withUnit(c))
	}
	for _, c := range d.Values {
		h = append(h, withUnit(c))
	}
	return append(h, "result file", "result sha256", "revisions", "earlier files", "ingested (UTC)",
		"handed off (UTC)", "handoff file", "instrument", "sign-offs", "external")
}

func withUnit(c Column) string {
	if c.Unit == "" {
		return c.Name
	}
	return c.Name + " [" + c.Unit + "]"
}

// WriteCSV writes the runs as RFC 4180 CSV: CRLF line ends, a header row.
// Text that a spreadsheet would run as a formula (starting with =, +, -,
// @, tab or carriage return) is prefixed with a single quote, as the OWASP
// advice on CSV injection has it; numbers are written as they are.
func (d Document) WriteCSV(w io.Writer) error {
	rw := recordWriter{w: w}
	rw.write(d.Header())
	for _, r := range d.Runs {
		rec := []string{r.Run, r.Status, text(r.Reason), text(r.Method), stamp(r.Proposed)}
		for _, c := range d.Factors {
			rec = append(rec, value(r.Setpoint[c.Name]))
		}
		for _, c := range d.Values {
			v, ok := r.Values[c.Name]
			if ok {
				rec = append(rec, strconv.FormatFloat(v, 'g', -1, 64))
			} else {
				rec = append(rec, "")
			}
		}
		var latest File
		var earlier []string
		if n := len(r.Files); n > 0 {
			latest = r.Files[n-1]
			for _, f := range r.Files[:n-1] {
				earlier = append(earlier, fmt.Sprintf("%s (sha256 %s, revision %d)", f.Path, f.SHA256, f.Revision))
			}
		}
		var signs []string
		for _, s := range r.Signoffs {
			one := fmt.Sprintf("%s by %s (%s) at %s: %s", s.Meaning, s.By, s.Name, s.Time.Format(time.RFC3339), s.Reason)
			if len(s.Values) > 0 {
				one += " [edited values " + describe(d.Factors, s.Values) + "]"
			}
			signs = append(signs, one)
		}
		ingested := ""
		if latest.Path != "" {
			ingested = latest.Ingested.Format(time.RFC3339Nano)
		}
		rec = append(rec, text(latest.Path), latest.SHA256, strconv.Itoa(len(r.Files)), text(strings.Join(earlier, "; ")), ingested,
			stamp(r.HandedOff), text(r.Handoff), r.Instrument, text(strings.Join(signs, "; ")), strconv.FormatBool(r.External))
		rw.write(rec)
	}
	if rw.err != nil {
		return fmt.Errorf("export: %w", rw.err)
	}
	return nil
}

// recordWriter ends each record with CRLF (RFC 4180 section 2) and keeps
// a line break inside a quoted field as it is: encoding/csv's UseCRLF
// would turn an embedded LF into CRLF, which other readers then keep.
type recordWriter struct {
	w   io.Writer
	buf bytes.Buffer
	err error
}

func (r *recordWriter) write(rec []string) {
	if r.err != nil {
		return
	}
	r.buf.Reset()
	cw := csv.NewWriter(&r.buf)
	if r.err = cw.Write(rec); r.err != nil {
		return
	}
	if cw.Flush(); cw.Error() != nil {
		r.err = cw.Error()
		return
	}
	line := bytes.TrimSuffix(r.buf.Bytes(), []byte("\n"))
	_, r.err = r.w.Write(append(line, '\r', '\n'))
}

func describe(cols []Column, vals map[string]any) string {
	var parts []string
	for _, c := range cols {
		if v, ok := vals[c.Name]; ok {
			parts = append(parts, c.Name+"="+value(v))
		}
	}
	return strings.Join(parts, ", ")
}

func value(v any) string {
	switch x := v.(type) {
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	case string:
		return text(x)
	}
	return ""
}

func stamp(t *time.Time) string {
	if t == nil {
		return ""
	}
	return t.Format(time.RFC3339Nano)
}

// formulaStart are the first characters a spreadsheet takes for a formula.
var formulaStart = []byte{'=', '+', '-', '@', '\t', '\r'}

func text(s string) string {
	if s != "" && slices.Contains(formulaStart, s[0]) {
		return "'" + s
	}
	return s
}
