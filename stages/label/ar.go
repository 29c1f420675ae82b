package label

import (
	"fmt"
	"math"

	"github.com/squall-climate/squall/stages/grid"
)

// ARObject is one connected region of above-threshold IVT (or IWV) at one
// time step, with its geometry on the sphere and whether it passed.
type ARObject struct {
	Step        int
	Label       int32   // component label in the step's labelling
	Pixels      int     // grid points
	Area        float64 // m2
	Length      float64 // m, largest great-circle distance between two pixel centres
	Width       float64 // m, Area / Length
	Aspect      float64 // Length / Width
	CentroidLat float64 // degrees, area-weighted
	CentroidLon float64
	MaxValue    float64 // largest IVT (or IWV) in the object
	Kept        bool
	Reason      string // why it was dropped ("" when kept)
}

// DetectAR finds atmospheric rivers in one field: pixels where value >=
// thr (per pixel; NaN never passes) are grouped into 8-connected objects
// (across the date line on a global grid), and an object is kept when
//
//	|centroid latitude| >= MinCentroidLat,
//	Length >= MinLength, Width <= MaxWidth and Length/Width >= MinAspect.
//
// Length is the object's largest great-circle extent between pixel
// centres and Width its area over its length, the width of a band of that
// length and area. mask (flat, grid order) receives true on the pixels of
// kept objects. Objects are returned in label order.
func DetectAR(g *grid.Grid, value, thr []float64, c *ARConfig, step int, mask []bool) ([]ARObject, error) {
	n := g.Len()
	if len(value) != n || len(thr) != n || len(mask) != n {
		return nil, fmt.Errorf("label: AR field has %d points, threshold %d, mask %d, grid %d", len(value), len(thr), len(mask), n)
	}
	above := make([]bool, n)
	for k, v := range value {
		above[k] = v >= thr[k]
	}
	lab, err := g.Components(above)
	if err != nil {
		return nil, err
	}
	objs := make([]ARObject, len(lab.Components))
	for ci, comp := range lab.Components {
		pix := lab.Pixels(comp.Label)
		o := ARObject{
			Step: step, Label: comp.Label, Pixels: comp.Pixels, Area: comp.Area,
			CentroidLat: comp.CentroidLat, CentroidLon: comp.CentroidLon, MaxValue: math.Inf(-1),
		}
		for _, k := range pix {
			o.MaxValue = math.Max(o.MaxValue, value[k])
		}
		sh, err := g.Shape(pix)
		if err != nil {
			return nil, err
		}
		o.Length, o.Width, o.Aspect = sh.Length, sh.Width, sh.Ratio
		switch {
		case math.Abs(o.CentroidLat) < c.MinCentroidLat:
			o.Reason = fmt.Sprintf("centroid at %.1f deg, within %.1f deg of the equator", o.CentroidLat, c.MinCentroidLat)
		case o.Length < c.MinLength:
			o.Reason = fmt.Sprintf("length %.0f km < %.0f km", o.Length/1e3, c.MinLength/1e3)
		case o.Width > c.MaxWidth:
			o.Reason = fmt.Sprintf("width %.0f km > %.0f km", o.Width/1e3, c.MaxWidth/1e3)
		case o.Aspect < c.MinAspect:
			o.Reason = fmt.Sprintf("length/width %.2f < %.2f", o.Aspect, c.MinAspect)
		default:
			o.Kept = true
			for _, k := range pix {
				mask[k] = true
			}
		}
		objs[ci] = o
	}
	return objs, nil
}
