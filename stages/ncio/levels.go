package ncio

import (
	"fmt"
	"strings"
)

// LevelKind says how a vertical coordinate gives pressure.
type LevelKind int

const (
	// PressureLevels: the coordinate values are pressures.
	PressureLevels LevelKind = iota + 1
	// HybridSigmaPressure: p(k) = a(k) p0 + b(k) ps (CF-1.13 appendix D,
	// atmosphere_hybrid_sigma_pressure_coordinate).
	HybridSigmaPressure
)

func (k LevelKind) String() string {
	switch k {
	case PressureLevels:
		return "pressure"
	case HybridSigmaPressure:
		return "hybrid sigma-pressure"
	}
	return "unknown"
}

// Levels describes a vertical coordinate in a form the subset stage can
// turn into pressure.
type Levels struct {
	Kind LevelKind
	Var  string // the vertical coordinate variable
	Dim  string // its dimension
	// Pa are the pressure levels in Pa, in file order (PressureLevels).
	Pa []float64
	// Hybrid coefficients (HybridSigmaPressure): p(k) = A[k]*P0 + B[k]*ps
	// with ps in Pa. For the "ap" form of the formula A holds ap(k) in Pa
	// and P0 is 1.
	A, B []float64
	P0   float64
	// PSVar names the surface pressure variable, PSUnits its units (the
	// caller converts ps to Pa).
	PSVar, PSUnits string
	// P0Assumed is true when the file names a p0 it does not contain (CAM
	// history files written by some tools) and P0 was set to 100000 Pa,
	// the reference pressure of those models (common practice).
	P0Assumed bool
}

// N returns the number of levels.
func (l *Levels) N() int {
	if l.Kind == PressureLevels {
		return len(l.Pa)
	}
	return len(l.B)
}

// Pressure returns the pressure in Pa of level k; ps (Pa) is the surface
// pressure and is ignored for pressure levels.
func (l *Levels) Pressure(k int, ps float64) float64 {
	if l.Kind == PressureLevels {
		return l.Pa[k]
	}
	return l.A[k]*l.P0 + l.B[k]*ps
}

// defaultP0 is the reference pressure of the CAM family of models, used
// when a hybrid file names a P0 variable it does not contain (common
// practice; vinth2p.nc from Debian's libncarg-data is such a file).
const defaultP0 = 100000.0

// Levels finds the vertical coordinate of the file; see LevelsOf.
func (f *File) Levels() (*Levels, error) { return f.findLevels(nil) }

// LevelsOf finds the vertical coordinate among the dimensions of v. A
// hybrid coordinate is recognised by standard_name
// atmosphere_hybrid_sigma_pressure_coordinate with formula_terms
// ("a: A b: B p0: P0 ps: PS" or "ap: AP b: B ps: PS"), or, for files
// without formula_terms, by the attributes A_var/B_var/P0_var/PS_var or
// the variables hyam/hybm (hyai/hybi for interfaces) and PS. A pressure
// coordinate is recognised by standard_name air_pressure, or by pressure
// units (Pa, hPa, mbar, ...) on a coordinate variable; its values are
// converted to Pa.
func (f *File) LevelsOf(v *Var) (*Levels, error) { return f.findLevels(v.dims) }

func (f *File) findLevels(onDims []string) (*Levels, error) {
	for _, v := range f.vars {
		if len(v.dims) != 1 {
			continue
		}
		if onDims != nil && !contains(onDims, v.dims[0]) {
			continue
		}
		if isHybrid(v) {
			return f.hybridLevels(v)
		}
		if pressureCoord(v) {
			vals, err := v.ReadFloat64(nil, nil)
			if err != nil {
				return nil, err
			}
			units := v.Units()
			if units == "" {
				units = "Pa"
			}
			if err := ConvertUnits(vals, units, "Pa", v.name); err != nil {
				return nil, varErr("read levels", f.path, v.name, err, "")
			}
			return &Levels{Kind: PressureLevels, Var: v.name, Dim: v.dims[0], Pa: vals}, nil
		}
	}
	return nil, &Error{Op: "find vertical coordinate", Path: f.path, Err: fmt.Errorf("no pressure or hybrid sigma-pressure coordinate: %w", ErrNotFound),
		Hint: "expected standard_name air_pressure or atmosphere_hybrid_sigma_pressure_coordinate, or pressure units on a coordinate variable; the file has " + f.describeVars()}
}

func contains(xs []string, x string) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}

func isHybrid(v *Var) bool {
	if v.StandardName() == "atmosphere_hybrid_sigma_pressure_coordinate" {
		return true
	}
	if _, ok := v.Attr("A_var"); ok {
		return true
	}
	u := strings.ToLower(v.Units())
	return u == "hybrid_sigma_pressure" || u == "level" && (v.f.HasVar("hyam") && v.name == "lev" || v.f.HasVar("hyai") && v.name == "ilev")
}

func pressureCoord(v *Var) bool {
	if v.StandardName() == "air_pressure" {
		return true
	}
	u := v.Units()
	if u == "" {
		return false
	}
	c, err := NewConverter(u, "Pa")
	if err != nil || c.Offset != 0 {
		return false
	}
	// Only a coordinate variable or a declared vertical axis: a 1-D
	// pressure time series is not a vertical coordinate.
	return v.name == v.dims[0] || strings.EqualFold(v.AttrString("axis"), "Z") || v.AttrString("positive") != ""
}

// parseFormulaTerms splits "a: hyam b: hybm p0: P0 ps: PS" into a map.
func parseFormulaTerms(s string) (map[string]string, error) {
	out := map[string]string{}
	fields := strings.Fields(s)
	for i := 0; i < len(fields); i++ {
		key := fields[i]
		if !strings.HasSuffix(key, ":") || i+1 >= len(fields) {
			return nil, fmt.Errorf("formula_terms %q is not of the form \"term: variable ...\"", s)
		}
		out[strings.TrimSuffix(key, ":")] = fields[i+1]
		i++
	}
	return out, nil
}

func (f *File) hybridLevels(v *Var) (*Levels, error) {
	l := &Levels{Kind: HybridSigmaPressure, Var: v.name, Dim: v.dims[0]}
	fail := func(err error, hint string) (*Levels, error) {
		return nil, varErr("read hybrid levels", f.path, v.name, err, hint)
	}
	terms := map[string]string{}
	if ft := v.AttrString("formula_terms"); ft != "" {
		var err error
		if terms, err = parseFormulaTerms(ft); err != nil {
			return fail(err, "")
		}
	} else {
		// The variant without formula_terms: attributes naming the
		// variables, else the CAM names.
		interfaces := strings.HasPrefix(v.name, "i")
		def := map[string]string{"a": "hyam", "b": "hybm", "p0": "P0", "ps": "PS"}
		if interfaces {
			def["a"], def["b"] = "hyai", "hybi"
		}
		for term, attr := range map[string]string{"a": "A_var", "b": "B_var", "p0": "P0_var", "ps": "PS_var"} {
			if s := v.AttrString(attr); s != "" {
				terms[term] = s
			} else {
				terms[term] = def[term]
			}
		}
	}
	read1D := func(term string) ([]float64, *Var, error) {
		name, ok := terms[term]
		if !ok {
			return nil, nil, fmt.Errorf("formula term %q missing", term)
		}
		tv, err := f.Var(name)
		if err != nil {
			return nil, nil, err
		}
		if len(tv.dims) != 1 || tv.dims[0] != l.Dim {
			return nil, nil, fmt.Errorf("formula term %s = %q has dims (%s), want (%s)", term, name, strings.Join(tv.dims, ","), l.Dim)
		}
		xs, err := tv.ReadFloat64(nil, nil)
		return xs, tv, err
	}
	var err error
	if l.B, _, err = read1D("b"); err != nil {
		return fail(err, "")
	}
	if _, ok := terms["ap"]; ok {
		var av *Var
		if l.A, av, err = read1D("ap"); err != nil {
			return fail(err, "")
		}
		if u := av.Units(); u != "" {
			if err := ConvertUnits(l.A, u, "Pa", av.name); err != nil {
				return fail(err, "")
			}
		}
		l.P0 = 1
	} else {
		if l.A, _, err = read1D("a"); err != nil {
			return fail(err, "")
		}
		p0name := terms["p0"]
		if pv, err := f.Var(p0name); err == nil {
			xs, err := pv.ReadFloat64(nil, nil)
			if err != nil {
				return nil, err
			}
			if len(xs) != 1 {
				return fail(fmt.Errorf("p0 variable %q has %d values, want 1", p0name, len(xs)), "")
			}
			l.P0 = xs[0]
			if u := pv.Units(); u != "" {
				if err := ConvertUnits(xs, u, "Pa", pv.name); err != nil {
					return fail(err, "")
				}
				l.P0 = xs[0]
			}
		} else if _, hasFT := v.Attr("formula_terms"); hasFT {
			return fail(fmt.Errorf("p0 variable %q named in formula_terms is missing", p0name), "")
		} else {
			l.P0, l.P0Assumed = defaultP0, true
		}
	}
	l.PSVar = terms["ps"]
	ps, err := f.Var(l.PSVar)
	if err != nil {
		return fail(fmt.Errorf("surface pressure variable %q: %w", l.PSVar, ErrNotFound), "hybrid levels need the surface pressure in the same file")
	}
	l.PSUnits = ps.Units()
	if len(l.A) != len(l.B) {
		return fail(fmt.Errorf("a has %d values, b has %d", len(l.A), len(l.B)), "")
	}
	return l, nil
}
