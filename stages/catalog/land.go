package catalog

import (
	"fmt"
	"math"

	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// LandRule says which values of a land variable mean land.
type LandRule struct {
	// Values, when not empty, lists the values that mean land (category
	// masks such as 0 ocean, 1 land, 2 lake, 3 small island, 4 ice shelf).
	Values []float64
	// MinFraction is used when Values is empty: land where the value (a
	// land area fraction 0..1) is at least this.
	MinFraction float64
}

// IsLand applies the rule to one value; NaN (missing) is not land.
func (r LandRule) IsLand(x float64) bool {
	if math.IsNaN(x) {
		return false
	}
	if len(r.Values) > 0 {
		for _, v := range r.Values {
			if x == v {
				return true
			}
		}
		return false
	}
	return x >= r.MinFraction
}

// Apply turns a field into a land mask.
func (r LandRule) Apply(xs []float64) []bool {
	out := make([]bool, len(xs))
	for k, x := range xs {
		out[k] = r.IsLand(x)
	}
	return out
}

// Regrid choices for a land mask on another grid than the masks.
const (
	RegridNearest = "nearest"
	RegridRefuse  = "refuse"
)

// ReadLandMask reads a land mask or land fraction file onto grid g.
// varName names the variable; "" finds it by standard_name
// land_area_fraction, else takes the file's only 2-D (lat, lon) variable.
// When the file's grid differs from g, regrid says what to do: "nearest"
// takes, for every cell of g, the value of the source cell containing its
// centre (nearest centre along each axis; a centre outside the source grid
// is an error, since a regional land mask cannot say what lies beyond it),
// "refuse" returns an error.
func ReadLandMask(path, varName string, rule LandRule, g *grid.Grid, regrid string) ([]bool, error) {
	f, err := ncio.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var v *ncio.Var
	switch {
	case varName != "":
		if v, err = f.Var(varName); err != nil {
			return nil, err
		}
	default:
		v, _ = f.FindVar("land_area_fraction", "land_area_fraction")
		if v == nil {
			var cands []*ncio.Var
			for _, x := range f.Vars() {
				if len(x.DimNames()) == 2 {
					cands = append(cands, x)
				}
			}
			if len(cands) != 1 {
				return nil, fmt.Errorf("%s: no variable with standard_name land_area_fraction and %d two-dimensional variables; name one with the setting land_mask_variable", path, len(cands))
			}
			v = cands[0]
		}
	}
	if len(v.DimNames()) != 2 {
		return nil, fmt.Errorf("%s: land variable %s has dimensions %v, want (lat, lon)", path, v.Name(), v.DimNames())
	}
	ng, err := f.GridOf(v)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	src, err := grid.New(ng.Lat, ng.Lon)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if v.DimNames()[0] != ng.LatDim {
		return nil, fmt.Errorf("%s: land variable %s is (lon, lat); want (lat, lon)", path, v.Name())
	}
	x, err := v.ReadFloat64(nil, nil)
	if err != nil {
		return nil, err
	}
	if len(rule.Values) == 0 {
		if u := v.Units(); u == "%" || u == "percent" {
			for k := range x {
				x[k] /= 100
			}
		}
	}
	srcLand := rule.Apply(x)
	if src.SameAs(g) == nil {
		return srcLand, nil
	}
	if regrid == RegridRefuse {
		return nil, fmt.Errorf("%s: land mask is on a %s, the masks on a %s; regrid it first or set land_mask_regrid: nearest", path, src, g)
	}
	return regridNearest(srcLand, src, g, path)
}

// regridNearest maps a source mask onto g by the source cell containing
// each target centre.
func regridNearest(srcLand []bool, src, g *grid.Grid, path string) ([]bool, error) {
	out := make([]bool, g.Len())
	for i, lat := range g.Lat {
		for j, lon := range g.Lon {
			si, sj, ok := src.Locate(lat, lon)
			if !ok {
				return nil, fmt.Errorf("%s: land mask (%s) does not cover the mask cell at lat %g lon %g; use a land mask that covers the masks' grid", path, src, lat, lon)
			}
			out[g.Index(i, j)] = srcLand[src.Index(si, sj)]
		}
	}
	return out, nil
}
