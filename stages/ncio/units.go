package ncio

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Converter turns values in one unit into another: y = x*Scale + Offset.
type Converter struct {
	From, To      string
	Scale, Offset float64
}

// Identity reports whether the conversion leaves values unchanged.
func (c Converter) Identity() bool { return c.Scale == 1 && c.Offset == 0 }

// Apply converts values in place. NaN stays NaN.
func (c Converter) Apply(xs []float64) {
	if c.Identity() {
		return
	}
	for i, x := range xs {
		xs[i] = x*c.Scale + c.Offset
	}
}

// Apply32 converts float32 values in place.
func (c Converter) Apply32(xs []float32) {
	if c.Identity() {
		return
	}
	for i, x := range xs {
		xs[i] = float32(float64(x)*c.Scale + c.Offset)
	}
}

// Value converts one value.
func (c Converter) Value(x float64) float64 { return x*c.Scale + c.Offset }

// NewConverter returns the conversion between two unit strings. The unit
// grammar is the part of UDUNITS that CF files use: products of unit
// symbols with integer powers written "m s-1", "m s^-1", "m s**-1",
// "m.s-1", "m/s", "kg/m2", "1/s", optional SI prefixes, and a leading
// number ("1e-3 kg kg-1"). Known symbols: kg, g, m, s, K, Pa, bar, atm,
// N, J, W, min, h, day, percent (%), 1, and the temperature units degC,
// deg_C, celsius, degree_Celsius. Temperatures with an offset (degC) only
// convert when they stand alone. As CF practice for water, kg m-2 and mm
// (of liquid water) are interchangeable, and so are kg m-2 s-1 and mm s-1.
func NewConverter(from, to string) (Converter, error) {
	a, err := parseUnit(from)
	if err != nil {
		return Converter{}, err
	}
	b, err := parseUnit(to)
	if err != nil {
		return Converter{}, err
	}
	c := Converter{From: from, To: to}
	if a.offset != 0 || b.offset != 0 {
		// Affine temperatures: both must be plain temperatures.
		if a.dim != (dims{k: 1}) || b.dim != (dims{k: 1}) {
			return c, fmt.Errorf("units %q and %q: a temperature with an offset (degC) converts only to another temperature", from, to)
		}
		// x_from -> kelvin: x*sa + oa ; kelvin -> to: (K - ob)/sb
		c.Scale = a.scale / b.scale
		c.Offset = (a.offset - b.offset) / b.scale
		return c, nil
	}
	if a.dim == b.dim {
		c.Scale = a.scale / b.scale
		return c, nil
	}
	// Water equivalence: 1 kg m-2 of liquid water is 1 mm deep
	// (density 1000 kg m-3), so mass per area and depth convert.
	water := dims{kg: 1, m: -3}
	if a.dim.sub(b.dim) == water { // mass per area to depth: divide by density
		c.Scale = a.scale / b.scale / 1000
		return c, nil
	}
	if b.dim.sub(a.dim) == water { // depth to mass per area
		c.Scale = a.scale / b.scale * 1000
		return c, nil
	}
	return c, fmt.Errorf("units %q (%s) and %q (%s) are not compatible", from, a.dim, to, b.dim)
}

// ConvertUnits converts values in place from one unit to another; varName
// only labels the error, which names both units and the variable.
func ConvertUnits(values []float64, from, to, varName string) error {
	c, err := NewConverter(from, to)
	if err != nil {
		return fmt.Errorf("variable %q: cannot convert: %w", varName, err)
	}
	c.Apply(values)
	return nil
}

// SameUnits reports whether two unit strings denote the same unit (e.g.
// "m/s" and "m s-1").
func SameUnits(a, b string) bool {
	c, err := NewConverter(a, b)
	return err == nil && c.Identity()
}

// dims are exponents over the base units kg, m, s, K.
type dims struct{ kg, m, s, k int }

func (d dims) add(e dims, p int) dims {
	return dims{d.kg + p*e.kg, d.m + p*e.m, d.s + p*e.s, d.k + p*e.k}
}

func (d dims) sub(e dims) dims { return d.add(e, -1) }

func (d dims) String() string {
	var parts []string
	for _, x := range []struct {
		n string
		p int
	}{{"kg", d.kg}, {"m", d.m}, {"s", d.s}, {"K", d.k}} {
		switch x.p {
		case 0:
		case 1:
			parts = append(parts, x.n)
		default:
			parts = append(parts, x.n+strconv.Itoa(x.p))
		}
	}
	if len(parts) == 0 {
		return "dimensionless"
	}
	return strings.Join(parts, " ")
}

type unitDef struct {
	scale  float64
	offset float64 // kelvin = x*scale + offset (temperatures only)
	dim    dims
}

var baseUnits = map[string]unitDef{
	"kg":  {scale: 1, dim: dims{kg: 1}},
	"g":   {scale: 1e-3, dim: dims{kg: 1}},
	"m":   {scale: 1, dim: dims{m: 1}},
	"s":   {scale: 1, dim: dims{s: 1}},
	"K":   {scale: 1, dim: dims{k: 1}},
	"Pa":  {scale: 1, dim: dims{kg: 1, m: -1, s: -2}},
	"N":   {scale: 1, dim: dims{kg: 1, m: 1, s: -2}},
	"J":   {scale: 1, dim: dims{kg: 1, m: 2, s: -2}},
	"W":   {scale: 1, dim: dims{kg: 1, m: 2, s: -3}},
	"bar": {scale: 1e5, dim: dims{kg: 1, m: -1, s: -2}},
	"atm": {scale: 101325, dim: dims{kg: 1, m: -1, s: -2}},
	// Names and aliases used in climate files.
	"mbar":            {scale: 100, dim: dims{kg: 1, m: -1, s: -2}},
	"mb":              {scale: 100, dim: dims{kg: 1, m: -1, s: -2}},
	"millibar":        {scale: 100, dim: dims{kg: 1, m: -1, s: -2}},
	"min":             {scale: 60, dim: dims{s: 1}},
	"minute":          {scale: 60, dim: dims{s: 1}},
	"h":               {scale: 3600, dim: dims{s: 1}},
	"hr":              {scale: 3600, dim: dims{s: 1}},
	"hour":            {scale: 3600, dim: dims{s: 1}},
	"d":               {scale: 86400, dim: dims{s: 1}},
	"day":             {scale: 86400, dim: dims{s: 1}},
	"sec":             {scale: 1, dim: dims{s: 1}},
	"second":          {scale: 1, dim: dims{s: 1}},
	"meter":           {scale: 1, dim: dims{m: 1}},
	"metre":           {scale: 1, dim: dims{m: 1}},
	"kelvin":          {scale: 1, dim: dims{k: 1}},
	"degK":            {scale: 1, dim: dims{k: 1}},
	"deg_K":           {scale: 1, dim: dims{k: 1}},
	"degrees_K":       {scale: 1, dim: dims{k: 1}},
	"degC":            {scale: 1, offset: 273.15, dim: dims{k: 1}},
	"deg_C":           {scale: 1, offset: 273.15, dim: dims{k: 1}},
	"degrees_C":       {scale: 1, offset: 273.15, dim: dims{k: 1}},
	"degree_C":        {scale: 1, offset: 273.15, dim: dims{k: 1}},
	"celsius":         {scale: 1, offset: 273.15, dim: dims{k: 1}},
	"Celsius":         {scale: 1, offset: 273.15, dim: dims{k: 1}},
	"degree_Celsius":  {scale: 1, offset: 273.15, dim: dims{k: 1}},
	"degrees_Celsius": {scale: 1, offset: 273.15, dim: dims{k: 1}},
	"%":               {scale: 0.01},
	"percent":         {scale: 0.01},
	"1":               {scale: 1},
	"dimensionless":   {scale: 1},
}

// prefixes are the SI prefixes accepted in front of m, g, s, Pa, bar, N,
// J, W (not K, to keep "kK" style oddities out).
var prefixes = map[string]float64{
	"k": 1e3, "h": 1e2, "da": 1e1, "d": 1e-1, "c": 1e-2, "m": 1e-3, "u": 1e-6, "µ": 1e-6, "M": 1e6, "G": 1e9,
}

func lookupSymbol(sym string) (unitDef, bool) {
	if u, ok := baseUnits[sym]; ok {
		return u, true
	}
	for _, plural := range []string{"s", "es"} {
		if strings.HasSuffix(sym, plural) {
			if u, ok := baseUnits[strings.TrimSuffix(sym, plural)]; ok && len(sym) > 3 {
				return u, true
			}
		}
	}
	for p, f := range prefixes {
		if !strings.HasPrefix(sym, p) {
			continue
		}
		rest := strings.TrimPrefix(sym, p)
		switch rest {
		case "m", "g", "s", "Pa", "bar", "N", "J", "W":
			u := baseUnits[rest]
			u.scale *= f
			return u, true
		}
	}
	return unitDef{}, false
}

// parseUnit parses a unit string into scale and dimensions.
func parseUnit(s string) (unitDef, error) {
	orig := s
	s = strings.TrimSpace(s)
	if s == "" || s == "-" {
		return unitDef{scale: 1}, nil
	}
	out := unitDef{scale: 1}
	// Tokenise: '/' divides the following factor; '*', '.', and blanks
	// multiply; "**" and '^' introduce exponents.
	s = strings.ReplaceAll(s, "**", "^")
	var tokens []string
	var cur strings.Builder
	flush := func() {
		if cur.Len() > 0 {
			tokens = append(tokens, cur.String())
			cur.Reset()
		}
	}
	for i, r := range s {
		switch {
		case r == ' ' || r == '*' || r == '\t':
			flush()
		case r == '.' && !(i > 0 && isDigit(s[i-1]) && i+1 < len(s) && isDigit(s[i+1])):
			flush()
		case r == '/':
			flush()
			tokens = append(tokens, "/")
		default:
			cur.WriteRune(r)
		}
	}
	flush()
	if len(tokens) == 0 {
		return unitDef{scale: 1}, nil
	}
	divide := false
	offsetSeen := false
	for _, tok := range tokens {
		if tok == "/" {
			divide = true
			continue
		}
		sign := 1
		if divide {
			sign = -1
			divide = false
		}
		if x, err := strconv.ParseFloat(tok, 64); err == nil {
			if sign < 0 {
				x = 1 / x
			}
			out.scale *= x
			continue
		}
		sym, pow := splitPower(tok)
		u, ok := lookupSymbol(sym)
		if !ok {
			return unitDef{}, fmt.Errorf("unknown unit %q in %q", sym, orig)
		}
		if u.offset != 0 {
			if len(tokens) != 1 {
				return unitDef{}, fmt.Errorf("unit %q: %s cannot be combined with other units", orig, sym)
			}
			offsetSeen = true
		}
		p := sign * pow
		out.scale *= math.Pow(u.scale, float64(p))
		out.dim = out.dim.add(u.dim, p)
		if offsetSeen {
			out.offset = u.offset
		}
	}
	return out, nil
}

func isDigit(b byte) bool { return b >= '0' && b <= '9' }

// splitPower splits "m-2", "m^-2", "s2" into symbol and integer power.
func splitPower(tok string) (string, int) {
	if i := strings.IndexByte(tok, '^'); i >= 0 {
		p, err := strconv.Atoi(tok[i+1:])
		if err == nil {
			return tok[:i], p
		}
	}
	i := len(tok)
	for i > 0 && (isDigit(tok[i-1])) {
		i--
	}
	if i > 0 && tok[i-1] == '-' || i > 0 && tok[i-1] == '+' {
		i--
	}
	if i == 0 || i == len(tok) {
		return tok, 1
	}
	p, err := strconv.Atoi(tok[i:])
	if err != nil {
		return tok, 1
	}
	return tok[:i], p
}
