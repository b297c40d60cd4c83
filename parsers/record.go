package parsers

// Value is one value read from a file, with where it came from.
type Value struct {
	Number float64 `json:"number"`
	Unit   string  `json:"unit,omitempty"`
	// Line and Column locate the value (the last occurrence used when
	// several were reduced); 0 when not known.
	Line   int `json:"line"`
	Column int `json:"column"`
	// Rows is how many occurrences were reduced to this value.
	Rows int `json:"rows"`
	// Failed, when not empty, says why there is no number (a missing or
	// flagged value, or a derived value whose inputs failed).
	Failed string `json:"failed,omitempty"`
	// Expression is the formula of a derived value.
	Expression string `json:"expression,omitempty"`
}

// Record is everything a parser read from one file.
type Record struct {
	// RunID is empty when the spec says the run is the oldest unanswered
	// handoff (the agent decides which).
	RunID string `json:"run"`
	// RunIDFrom says where the run id was found.
	RunIDFrom string `json:"run_from"`
	// Values maps each value and derived value to what was read.
	Values map[string]Value `json:"values"`
	// Factors maps factor names to values echoing the setpoint run.
	Factors  map[string]Value `json:"factors,omitempty"`
	Encoding string           `json:"encoding"`
	Warnings []string         `json:"warnings,omitempty"`
}
