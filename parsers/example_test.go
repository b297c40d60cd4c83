package parsers_test

import (
	"fmt"

	"benchtender/parsers"
)

func Example() {
	spec := parsers.DefaultSpec()
	spec.Delimiter = ";"
	spec.Decimal = ","
	spec.SkipLines = 1
	spec.RunIDPattern = `(R[0-9]+)`
	spec.Values = map[string]parsers.ValueSpec{"strength": {Column: "Strength", Unit: "%"}}
	p, err := parsers.Default().New(spec)
	if err != nil {
		panic(err)
	}
	file := "Instrument: bench (invented)\r\nSample;Strength\r\nA;87,32\r\n"
	rec, err := p.Parse("export_R0007.csv", []byte(file))
	if err != nil {
		panic(err)
	}
	v := rec.Values["strength"]
	fmt.Printf("run %s (from the %s): strength %.2f %s at line %d, column %d\n", rec.RunID, rec.RunIDFrom, v.Number, v.Unit, v.Line, v.Column)

	rec, _ = p.Parse("export_R0008.csv", []byte("Instrument: bench\r\nSample;Strength\r\nA;n/a\r\n"))
	fmt.Println("R0008:", rec.Values["strength"].Failed)
	_, err = p.Parse("export_R0009.csv", []byte("Instrument: bench\r\nSample;Strength\r\nA;8.5\r\n"))
	fmt.Println(err)
	// Output:
	// run R0007 (from the file name): strength 87.32 % at line 3, column 3
	// R0008: missing value ("n/a") at line 3, column 3
	// export_R0009.csv:3:3: not a number: column "Strength": "8.5" has a '.' but the decimal mark is ','
}
