package parsers

import (
	"fmt"
	"strings"
)

// unit is a unit as a multiple of its quantity's SI (or coherent) unit:
// value_in_SI = value·factor + offset.
type unit struct {
	quantity string
	factor   float64
	offset   float64
}

// units lists the units a value may be converted between. Factors to SI
// are those of NIST Special Publication 811 (2008 edition), Guide for the
// Use of the International System of Units, Appendix B.8 (factors in bold
// there are exact; others are rounded as published). The values were
// taken from memory of that table and checked against reproductions of
// it; TestConversionsAgainstNIST repeats them beside their entries.
// Prefixed SI units (kPa, mL, mg, ...) are exact by definition.
var units = map[string]unit{
	// temperature, SI kelvin; NIST SP 811 sections 4.2.1.1 and B.9:
	// T/K = t/°C + 273.15, t/°C = (t/°F − 32)/1.8
	"K": {"temperature", 1, 0}, "degC": {"temperature", 1, 273.15}, "°C": {"temperature", 1, 273.15}, "C": {"temperature", 1, 273.15},
	"degF": {"temperature", 1 / 1.8, 273.15 - 32/1.8}, "°F": {"temperature", 1 / 1.8, 273.15 - 32/1.8}, "F": {"temperature", 1 / 1.8, 273.15 - 32/1.8},
	// pressure, SI pascal
	"Pa": {"pressure", 1, 0}, "hPa": {"pressure", 1e2, 0}, "kPa": {"pressure", 1e3, 0}, "MPa": {"pressure", 1e6, 0},
	"bar": {"pressure", 1e5, 0}, "mbar": {"pressure", 1e2, 0}, // B.8: bar = 1.0 E+05 Pa (exact)
	"atm":  {"pressure", 1.01325e5, 0},  // B.8: atmosphere, standard = 1.013 25 E+05 Pa (exact)
	"psi":  {"pressure", 6.894757e3, 0}, // B.8: pound-force per square inch = 6.894 757 E+03 Pa
	"torr": {"pressure", 1.333224e2, 0}, // B.8: torr = 1.333 224 E+02 Pa
	"mmHg": {"pressure", 1.333224e2, 0}, // B.8: millimeter of mercury, conventional = 1.333 224 E+02 Pa
	// length, SI metre
	"m": {"length", 1, 0}, "cm": {"length", 1e-2, 0}, "mm": {"length", 1e-3, 0}, "um": {"length", 1e-6, 0}, "µm": {"length", 1e-6, 0}, "nm": {"length", 1e-9, 0},
	"in": {"length", 2.54e-2, 0},  // B.8: inch = 2.54 E-02 m (exact)
	"ft": {"length", 3.048e-1, 0}, // B.8: foot = 3.048 E-01 m (exact)
	// mass, SI kilogram
	"kg": {"mass", 1, 0}, "g": {"mass", 1e-3, 0}, "mg": {"mass", 1e-6, 0}, "ug": {"mass", 1e-9, 0}, "µg": {"mass", 1e-9, 0},
	"lb": {"mass", 4.5359237e-1, 0}, // B.8: pound, avoirdupois = 4.535 924 E-01 kg (exactly 0.453 592 37)
	"oz": {"mass", 2.834952e-2, 0},  // B.8: ounce, avoirdupois = 2.834 952 E-02 kg
	// volume, SI cubic metre
	"m3": {"volume", 1, 0}, "L": {"volume", 1e-3, 0}, "l": {"volume", 1e-3, 0}, "mL": {"volume", 1e-6, 0}, "ml": {"volume", 1e-6, 0},
	"uL": {"volume", 1e-9, 0}, "µL": {"volume", 1e-9, 0},
	"gal":   {"volume", 3.785412e-3, 0}, // B.8: gallon, US liquid = 3.785 412 E-03 m³
	"fl_oz": {"volume", 2.957353e-5, 0}, // B.8: ounce, US fluid = 2.957 353 E-05 m³
	// time, SI second; B.8: minute = 6.0 E+01 s, hour = 3.6 E+03 s, day = 8.64 E+04 s
	"s": {"time", 1, 0}, "ms": {"time", 1e-3, 0}, "min": {"time", 60, 0}, "h": {"time", 3600, 0}, "d": {"time", 86400, 0},
	// amount concentration, SI mol/m³ (1 mol/L = 1 E+03 mol/m³)
	"mol/L": {"concentration", 1e3, 0}, "M": {"concentration", 1e3, 0}, "mmol/L": {"concentration", 1, 0}, "mM": {"concentration", 1, 0},
	"umol/L": {"concentration", 1e-3, 0}, "uM": {"concentration", 1e-3, 0}, "µM": {"concentration", 1e-3, 0},
	// mass concentration, SI kg/m³ (1 g/L = 1 kg/m³)
	"g/L": {"mass concentration", 1, 0}, "mg/mL": {"mass concentration", 1, 0}, "mg/L": {"mass concentration", 1e-3, 0},
	"ug/mL": {"mass concentration", 1e-3, 0}, "µg/mL": {"mass concentration", 1e-3, 0},
	// dimensionless fractions
	"%": {"fraction", 1e-2, 0}, "ppm": {"fraction", 1e-6, 0}, "fraction": {"fraction", 1, 0},
	// flow, SI m³/s
	"mL/min": {"flow", 1e-6 / 60, 0}, "L/min": {"flow", 1e-3 / 60, 0}, "L/h": {"flow", 1e-3 / 3600, 0}, "uL/min": {"flow", 1e-9 / 60, 0},
}

// Converter converts values from one unit to another.
type Converter func(float64) float64

// Conversion returns the converter from one unit to another. The same unit
// (or an empty one on either side) needs no conversion; unknown units and
// units of different quantities are errors.
func Conversion(from, to string) (Converter, error) {
	from, to = strings.TrimSpace(from), strings.TrimSpace(to)
	if from == to || from == "" || to == "" {
		return func(v float64) float64 { return v }, nil
	}
	a, ok := units[from]
	if !ok {
		return nil, fmt.Errorf("unknown unit %q", from)
	}
	b, ok := units[to]
	if !ok {
		return nil, fmt.Errorf("unknown unit %q", to)
	}
	if a.quantity != b.quantity {
		return nil, fmt.Errorf("cannot convert %s (%s) to %s (%s)", from, a.quantity, to, b.quantity)
	}
	return func(v float64) float64 { return ((v*a.factor + a.offset) - b.offset) / b.factor }, nil
}
