package parsers

// Value is one number read from a file, with where it came from.
type Value struct {
	Number float64 `json:"number"`
	Line   int     `json:"line"`
	Column int     `json:"column"`
	// Rows is how many rows were reduced to this value.
	Rows int `json:"rows"`
}

// Record is everything a parser read from one file.
type Record struct {
	RunID string `json:"run"`
	// RunIDFrom says where the run id was found ("file name" or a
	// location).
	RunIDFrom string `json:"run_from"`
	// Responses maps a response name to its value.
	Responses map[string]Value `json:"responses"`
	// Factors maps a factor name to its value, for files that echo the
	// setpoint.
	Factors  map[string]Value `json:"factors,omitempty"`
	Warnings []string         `json:"warnings,omitempty"`
}
