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
	spec.Responses = map[string]string{"strength": "Strength"}
	p, err := parsers.Default().New(spec)
	if err != nil {
		panic(err)
	}
	file := "Instrument: bench (invented)\r\nSample;Strength\r\nA;87,32\r\n"
	rec, err := p.Parse("export_R0007.csv", []byte(file))
	if err != nil {
		panic(err)
	}
	v := rec.Responses["strength"]
	fmt.Printf("run %s (from the %s): strength %.2f at line %d, column %d\n", rec.RunID, rec.RunIDFrom, v.Number, v.Line, v.Column)

	_, err = p.Parse("export_R0008.csv", []byte("Instrument: bench\r\nSample;Strength\r\nA;n/a\r\n"))
	fmt.Println(err)
	// Output:
	// run R0007 (from the file name): strength 87.32 at line 3, column 3
	// export_R0008.csv:3:3: not a number: column "Strength": "n/a"
}
