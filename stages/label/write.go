package label

import (
	"path/filepath"

	"github.com/squall-climate/squall/stages/ncio"
)

func (r *Result) write(dir string, fl *Fields, prov ncio.Provenance) (err error) {
	g := fl.Grid
	n := g.Len()
	nt := fl.Time.Len()
	land, err := fl.landFraction()
	if err != nil {
		return err
	}
	mw, err := createMask(filepath.Join(dir, MaskFile), fl, "squall heuristic class mask", prov, land)
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			mw.w.Abort()
		}
	}()
	// Kept track points by step.
	points := make([][]Candidate, nt)
	for _, t := range r.Tracks {
		for _, p := range t.Points {
			points[p.Step] = append(points[p.Step], p)
		}
	}
	var arw *arWriter
	if r.ar != nil {
		c, err := createCSV(filepath.Join(dir, ARObjectsFile), arHeader...)
		if err != nil {
			return err
		}
		defer c.close()
		arw = &arWriter{c: c, quantity: r.ar.quantity}
	}
	classes := make([]byte, n)
	tcMask := make([]bool, n)
	arMask := make([]bool, n)
	thr := make([]float64, n)
	var wind, tmp []float64
	for s := range nt {
		if err := r.ctx.Err(); err != nil {
			return err
		}
		clear(tcMask)
		clear(arMask)
		if r.tc != nil && len(points[s]) > 0 {
			wind, err = fl.readSpeed(r.tc.wind10, s, wind, tmp)
			if err != nil {
				return err
			}
			maskWind := r.cfg.TCConf.MaskWind
			if maskWind == 0 {
				maskWind = r.windMin
			}
			for _, p := range points[s] {
				TCFootprint(g, wind, p, maskWind, r.cfg.TCConf.MaskMaxRadius, tcMask)
			}
		}
		if r.ar != nil {
			val, err := fl.readAR(r.ar, s, r.cfg.ARConf.IVTTop)
			if err != nil {
				return err
			}
			r.thresholds(fl, s, thr)
			objs, err := DetectAR(g, val, thr, &r.cfg.ARConf, s, arMask)
			if err != nil {
				return err
			}
			arw.add(objs, fl.Time.Times[s].String())
		}
		Combine(classes, tcMask, arMask, r.cfg.Overlap)
		if err := mw.write(s, classes); err != nil {
			return err
		}
	}
	if err := mw.w.Close(); err != nil {
		return err
	}
	if arw != nil {
		if err := arw.c.close(); err != nil {
			return err
		}
	}
	if r.tc != nil {
		if err := writeCandidates(filepath.Join(dir, CandidatesFile), r.Candidates, fl); err != nil {
			return err
		}
		if err := writeTracks(filepath.Join(dir, TracksFile), r.Tracks, fl); err != nil {
			return err
		}
	}
	return nil
}

// Combine writes the class of every pixel: TropicalCyclone where only tc,
// AtmosphericRiver where only ar, the overlap class where both, else
// Background.
func Combine(classes []byte, tc, ar []bool, overlap string) {
	both := TropicalCyclone
	if overlap == ClassAR {
		both = AtmosphericRiver
	}
	for i := range classes {
		switch {
		case tc[i] && ar[i]:
			classes[i] = both
		case tc[i]:
			classes[i] = TropicalCyclone
		case ar[i]:
			classes[i] = AtmosphericRiver
		default:
			classes[i] = Background
		}
	}
}

// landFraction returns the 2-D land_area_fraction of fields.nc, or nil.
func (fl *Fields) landFraction() ([]float64, error) {
	if !fl.f.HasVar("land_area_fraction") {
		return nil, nil
	}
	v, err := fl.f.Var("land_area_fraction")
	if err != nil {
		return nil, err
	}
	if d := v.DimNames(); len(d) != 2 || d[0] != "lat" || d[1] != "lon" {
		return nil, nil // not the shared 2-D layout; leave it out
	}
	return v.ReadFloat64(nil, nil)
}
