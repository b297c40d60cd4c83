package parsers

import (
	"math"
	"testing"
)

// Conversions against NIST Special Publication 811 (2008), Guide for the
// Use of the International System of Units, Appendix B.8 (factors to SI)
// and B.9 / section 4.2.1.1 (temperature): each row is a published factor
// (as remembered and cross-checked against reproductions of the table) or
// an exact definition.
func TestConversionsAgainstNIST(t *testing.T) {
	cases := []struct {
		from, to string
		in, want float64
		tol      float64 // relative
	}{
		{"psi", "Pa", 1, 6.894757e3, 1e-12},   // B.8: pound-force per square inch
		{"torr", "Pa", 1, 1.333224e2, 1e-12},  // B.8: torr
		{"mmHg", "Pa", 1, 1.333224e2, 1e-12},  // B.8: millimeter of mercury, conventional
		{"atm", "kPa", 1, 101.325, 1e-12},     // B.8: atmosphere, standard (exact)
		{"bar", "kPa", 1, 100, 1e-12},         // B.8: bar (exact)
		{"psi", "bar", 14.5038, 1.0000, 1e-5}, // 14.5038 psi is 1 bar to 6 digits
		{"in", "mm", 1, 25.4, 1e-12},          // B.8: inch (exact)
		{"ft", "m", 1, 0.3048, 1e-12},         // B.8: foot (exact)
		{"lb", "kg", 1, 0.45359237, 1e-12},    // B.8: pound, avoirdupois (exact)
		{"oz", "g", 1, 28.34952, 1e-12},       // B.8: ounce, avoirdupois
		{"gal", "L", 1, 3.785412, 1e-12},      // B.8: gallon, US liquid
		{"fl_oz", "mL", 1, 29.57353, 1e-12},   // B.8: ounce, US fluid
		{"h", "min", 1, 60, 1e-12},            // B.8: hour
		{"d", "s", 1, 86400, 1e-12},           // B.8: day
		{"degC", "K", 0, 273.15, 1e-12},       // 4.2.1.1: T/K = t/°C + 273.15
		{"degF", "degC", 212, 100, 1e-12},     // B.9: t/°C = (t/°F − 32)/1.8
		{"degF", "degC", -40, -40, 1e-12},     // the scales cross at −40
		{"degF", "K", 32, 273.15, 1e-12},      //
		{"mM", "mol/L", 250, 0.25, 1e-12},     // prefixes: exact
		{"mg/mL", "g/L", 1.5, 1.5, 1e-12},     //
		{"ug/mL", "mg/L", 3, 3, 1e-12},        //
		{"%", "ppm", 0.1, 1000, 1e-12},        //
		{"mL/min", "L/h", 1000, 60, 1e-12},    //
	}
	for _, c := range cases {
		conv, err := Conversion(c.from, c.to)
		if err != nil {
			t.Errorf("%s -> %s: %v", c.from, c.to, err)
			continue
		}
		if got := conv(c.in); math.Abs(got-c.want) > c.tol*math.Max(1, math.Abs(c.want)) {
			t.Errorf("%v %s = %.10g %s, want %.10g", c.in, c.from, got, c.to, c.want)
		}
		back, _ := Conversion(c.to, c.from)
		if got := back(conv(c.in)); math.Abs(got-c.in) > 1e-9*math.Max(1, math.Abs(c.in)) {
			t.Errorf("%s -> %s -> %s: %v became %v", c.from, c.to, c.from, c.in, got)
		}
	}
	for _, bad := range [][2]string{{"psi", "degC"}, {"furlong", "m"}, {"m", "parsec"}, {"%", "mL"}} {
		if _, err := Conversion(bad[0], bad[1]); err == nil {
			t.Errorf("%s -> %s accepted", bad[0], bad[1])
		}
	}
}
