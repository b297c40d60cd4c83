package parsers

import (
	"encoding/json"
	"errors"
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/BurntSushi/toml"
)

var update = flag.Bool("update", false, "rewrite the expected .want.json files under testdata")

// outcome is what a sample file must yield: a record, or an error with its
// place and reason.
type outcome struct {
	Record *Record `json:"record,omitempty"`
	Error  *struct {
		Line   int    `json:"line"`
		Column int    `json:"column"`
		Reason string `json:"reason"`
		Text   string `json:"text"`
	} `json:"error,omitempty"`
}

var sentinels = []error{ErrEmpty, ErrBinary, ErrNoHeader, ErrMissingColumn, ErrBadNumber, ErrNoData, ErrNoRunID, ErrSyntax, ErrMissingValue, ErrIncomplete}

func loadSpec(t testing.TB, path string) Spec {
	t.Helper()
	s := DefaultSpec()
	md, err := toml.DecodeFile(path, &s)
	if err != nil {
		t.Fatal(err)
	}
	if u := md.Undecoded(); len(u) > 0 {
		t.Fatalf("%s: unknown keys %v", path, u)
	}
	return s
}

// formats are the folders of testdata, one per format.
var formats = []string{FormatDelimited, FormatReport, FormatJSON, FormatXML}

// samples returns every sample file under testdata/<format> that has a
// spec beside it.
func samples(t testing.TB, format string) []string {
	t.Helper()
	specs, err := filepath.Glob("testdata/" + format + "/*.spec.toml")
	if err != nil || len(specs) == 0 {
		t.Fatalf("no samples: %v", err)
	}
	var out []string
	for _, s := range specs {
		base := strings.TrimSuffix(s, ".spec.toml")
		m, _ := filepath.Glob(base + ".*")
		for _, f := range m {
			if !strings.HasSuffix(f, ".spec.toml") && !strings.HasSuffix(f, ".want.json") {
				out = append(out, f)
			}
		}
	}
	return out
}

// Every invented sample export parses to the record (or the error) stored
// beside it. Run with -update to rewrite them, then read the diff.
func TestSamples(t *testing.T) {
	reg := Default()
	var all []string
	for _, f := range formats {
		all = append(all, samples(t, f)...)
	}
	for _, file := range all {
		t.Run(filepath.Base(filepath.Dir(file))+"/"+filepath.Base(file), func(t *testing.T) {
			base := file[:len(file)-len(filepath.Ext(file))]
			p, err := reg.New(loadSpec(t, base+".spec.toml"))
			if err != nil {
				t.Fatal(err)
			}
			data, err := os.ReadFile(file)
			if err != nil {
				t.Fatal(err)
			}
			rec, perr := p.Parse(filepath.Base(file), data)
			var got outcome
			if perr != nil {
				var pe *ParseError
				if !errors.As(perr, &pe) {
					t.Fatalf("error %v is not a *ParseError", perr)
				}
				got.Error = &struct {
					Line   int    `json:"line"`
					Column int    `json:"column"`
					Reason string `json:"reason"`
					Text   string `json:"text"`
				}{Line: pe.Line, Column: pe.Column, Text: perr.Error()}
				for _, s := range sentinels {
					if errors.Is(perr, s) {
						got.Error.Reason = s.Error()
					}
				}
				if got.Error.Reason == "" {
					t.Errorf("error %v wraps no known reason", perr)
				}
				if !strings.HasPrefix(perr.Error(), filepath.Base(file)) {
					t.Errorf("error %q does not name the file", perr)
				}
			} else {
				got.Record = &rec
			}
			gotJSON, _ := json.MarshalIndent(got, "", "  ")
			gotJSON = append(gotJSON, '\n')
			wantPath := base + ".want.json"
			if *update {
				if err := os.WriteFile(wantPath, gotJSON, 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(wantPath)
			if err != nil {
				t.Fatalf("%v (run go test ./parsers -update to create it)", err)
			}
			if string(want) != string(gotJSON) {
				t.Errorf("%s: got\n%s\nwant\n%s", file, gotJSON, want)
			}
		})
	}
}

// The rules of RFC 4180, section 2, each as an example: CRLF line ends
// (rule 1), a last line without a line end (2), a header (3), spaces kept
// (4), quoted fields (5), line breaks, commas and quotes inside quoted
// fields (6, 7).
func TestRFC4180(t *testing.T) {
	spec := DefaultSpec()
	spec.RunIDSource = RunIDFromColumn
	spec.RunIDColumn = "id"
	spec.Values = map[string]ValueSpec{"v": {Column: "v"}}
	p, err := Default().New(spec)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name, in, id string
		v            float64
	}{
		{"rule 1: CRLF", "id,v,c\r\nzzz,1.5,xxx\r\n", "zzz", 1.5},
		{"rule 2: no final line break", "id,v,c\r\nzzz,2.5,xxx", "zzz", 2.5},
		{"rule 4: spaces are part of a field", "id,v,c\r\n a b ,3,x\r\n", "a b", 3},
		{"rule 5: quoted fields", "\"id\",\"v\",\"c\"\r\n\"aaa\",\"4\",\"ccc\"\r\n", "aaa", 4},
		// The second row's value is taken (reduce "last"), and its line
		// is 4, because the quoted field spans lines 2 and 3.
		{"rule 6: line break and comma in quotes", "id,v,c\r\naaa,5,\"b\r\nb,b\"\r\naaa,7,x\r\n", "aaa", 7},
		{"rule 7: doubled quote", "id,v,c\r\n\"b\"\"bb\",6,ccc\r\n", `b"bb`, 6},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rec, err := p.Parse("x.csv", []byte(c.in))
			if err != nil {
				t.Fatal(err)
			}
			// The run id is trimmed of spaces; the rest of the field
			// is kept as the RFC says.
			if rec.RunID != strings.TrimSpace(c.id) || rec.Values["v"].Number != c.v {
				t.Errorf("got %q = %v, want %q = %v", rec.RunID, rec.Values["v"].Number, c.id, c.v)
			}
			if strings.HasPrefix(c.name, "rule 6") && rec.Values["v"].Line != 4 {
				t.Errorf("value on line %d, want 4", rec.Values["v"].Line)
			}
		})
	}
}

func TestNumbers(t *testing.T) {
	for _, c := range []struct {
		decimal, thousands, cell string
		want                     float64
		failed                   string
		ok                       bool
	}{
		{".", "", "12.5", 12.5, "", true},
		{".", "", "-1e-3", -0.001, "", true},
		{".", "", "12,5", 0, "", false},
		{",", "", "12,5", 12.5, "", true},
		{",", "", "12.5", 0, "", false},
		{",", ".", "1.234,5", 1234.5, "", true},
		{".", ",", "1,234.5", 1234.5, "", true},
		{",", " ", "1 234,5", 1234.5, "", true},
		{".", "'", "1'234.5", 1234.5, "", true},
		{".", "", "Inf", 0, "", false},
		{".", "", "1e999", 0, "", false},
		{".", "", "NaN", 0, "missing value", true},
		{".", "", "", 0, "missing value", true},
		{".", "", "----", 0, "missing value", true},
		{".", "", "OVER", 0, "over range", true},
		{".", "", "<<<<", 0, "under range", true},
	} {
		spec := DefaultSpec()
		spec.Decimal, spec.Thousands, spec.Delimiter = c.decimal, c.thousands, ";"
		cm, err := newCommon(spec)
		if err != nil {
			t.Fatal(err)
		}
		got, failed, err := cm.number(c.cell)
		if (err == nil) != c.ok || (c.ok && (got != c.want || !strings.HasPrefix(failed, c.failed))) {
			t.Errorf("decimal %q thousands %q cell %q: %v %q %v; want %v %q ok=%v", c.decimal, c.thousands, c.cell, got, failed, err, c.want, c.failed, c.ok)
		}
	}
}

func TestRegistryRefusesDuplicates(t *testing.T) {
	r := Default()
	if err := r.Register(FormatDelimited, newDelimited); err == nil {
		t.Error("a second delimited format was accepted")
	}
	if _, err := r.New(Spec{Format: "nope"}); err == nil {
		t.Error("an unknown format was accepted")
	}
}

func TestSpecValidate(t *testing.T) {
	s := DefaultSpec()
	s.Delimiter = ",,"
	s.Decimal = ","
	s.RunIDPattern = "(a)(b)"
	s.Reduce = "average"
	s.Encoding = "ebcdic"
	s.Derived = map[string]string{"x": "nope * 2"}
	ps := s.Validate(Default())
	keys := map[string]bool{}
	for _, p := range ps {
		keys[p.Key] = true
	}
	for _, k := range []string{"delimiter", "run_id_pattern", "reduce", "values", "encoding", "derived.x"} {
		if !keys[k] {
			t.Errorf("no problem reported for %s; got %v", k, ps)
		}
	}
}

// fuzzFormat runs every spec of one format's samples over fuzzed input:
// no input may panic or hang, and every failure is a *ParseError.
func fuzzFormat(f *testing.F, format string) {
	reg := Default()
	var parsers []Parser
	for _, file := range samples(f, format) {
		data, err := os.ReadFile(file)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data)
		base := file[:len(file)-len(filepath.Ext(file))]
		s := loadSpec(f, base+".spec.toml")
		if s.Format == "" {
			s.Format = format
		}
		p, err := reg.New(s)
		if err != nil {
			f.Fatal(err)
		}
		parsers = append(parsers, p)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		for _, p := range parsers {
			_, err := p.Parse("R0001.txt", data)
			var pe *ParseError
			if err != nil && !errors.As(err, &pe) {
				t.Fatalf("error %v is not a *ParseError", err)
			}
		}
	})
}

func FuzzDelimited(f *testing.F) { fuzzFormat(f, FormatDelimited) }
func FuzzReport(f *testing.F)    { fuzzFormat(f, FormatReport) }
func FuzzJSON(f *testing.F)      { fuzzFormat(f, FormatJSON) }
func FuzzXML(f *testing.F)       { fuzzFormat(f, FormatXML) }

// With run_id_source = "column" and no run_id_pattern, the column's text
// is the run id: the file-name pattern is not applied to it (issue 20:
// every file failed with "R0099" does not match the file-name pattern).
func TestColumnRunIDWithoutPattern(t *testing.T) {
	spec := DefaultSpec()
	spec.RunIDSource = RunIDFromColumn
	spec.RunIDColumn = "Sample"
	spec.Values = map[string]ValueSpec{"v": {Column: "v"}}
	if ps := spec.Validate(Default()); len(ps) > 0 {
		t.Fatal(ps)
	}
	p, err := Default().New(spec)
	if err != nil {
		t.Fatal(err)
	}
	rec, err := p.Parse("export.csv", []byte("Sample,v\nR0099,1.5\n"))
	if err != nil {
		t.Fatal(err)
	}
	if rec.RunID != "R0099" {
		t.Errorf("run id %q, want R0099", rec.RunID)
	}
	// From the file name, the stem stays the default.
	spec.RunIDSource = RunIDFromFileName
	if p, err = Default().New(spec); err != nil {
		t.Fatal(err)
	}
	if rec, err = p.Parse("R0100.csv", []byte("Sample,v\nR0099,1.5\n")); err != nil || rec.RunID != "R0100" {
		t.Errorf("from the file name: %q, %v; want R0100", rec.RunID, err)
	}
}

// Several occurrences warn only when no reduction is configured: a
// reduction the config names is what the user asked for (issue 20: a
// warning on every file for a configured "mean").
func TestReductionWarnsOnlyWhenNotConfigured(t *testing.T) {
	for _, c := range []struct {
		reduce string
		warn   bool
		want   float64
	}{{"", true, 3}, {"mean", false, 2}, {"last", false, 3}} {
		spec := DefaultSpec()
		spec.Reduce = c.reduce
		spec.Values = map[string]ValueSpec{"v": {Column: "v"}}
		p, err := Default().New(spec)
		if err != nil {
			t.Fatal(err)
		}
		rec, err := p.Parse("R1.csv", []byte("v\n1\n3\n"))
		if err != nil {
			t.Fatal(err)
		}
		if got := len(rec.Warnings) > 0; got != c.warn || rec.Values["v"].Number != c.want {
			t.Errorf("reduce %q: value %v, warnings %q; want %v, a warning: %v", c.reduce, rec.Values["v"].Number, rec.Warnings, c.want, c.warn)
		}
	}
}
