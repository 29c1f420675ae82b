package subset

import (
	"fmt"
	"math"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/ncio"
)

// derivedInfo describes the derived quantities: native units and CF
// standard name ("" where CF has none, as for the IVT magnitude).
var derivedInfo = map[string]struct {
	units, standardName, longName string
}{
	"wind_speed":         {"m s-1", "wind_speed", "wind speed"},
	"relative_vorticity": {"s-1", "atmosphere_upward_relative_vorticity", "relative vorticity"},
	"iwv":                {"kg m-2", "atmosphere_mass_content_of_water_vapor", "integrated water vapour"},
	"ivt_u":              {"kg m-1 s-1", "eastward_atmosphere_water_vapor_transport_across_unit_distance", "eastward integrated vapour transport"},
	"ivt_v":              {"kg m-1 s-1", "northward_atmosphere_water_vapor_transport_across_unit_distance", "northward integrated vapour transport"},
	"ivt":                {"kg m-1 s-1", "", "integrated vapour transport magnitude"},
}

// outChannel is one variable of fields.nc and how to compute it from a
// step's slabs.
type outChannel struct {
	name, quantity, standardName, longName, units string
	levelPa                                       float64
	layer                                         *[2]float64 // bottom, top (Pa) of an integral
	comment                                       string
	halo                                          int
	out                                           *ncio.Converter // native -> delivered units (derived), nil: none
	compute                                       func(d *stepData, dst []float32)
}

// stepData holds one time step of every source, window-sized per level.
type stepData struct {
	slabs map[*source][][]float32
	win   *window
}

// checkChannel validates a channel against the settings at load time.
func checkChannel(ch pipeline.Channel, o *options) error {
	if ch.Derived == "" {
		return nil
	}
	info, ok := derivedInfo[ch.Derived]
	if !ok {
		return fmt.Errorf("channel %q: unknown derived quantity %q", ch.Name, ch.Derived)
	}
	if ch.Units != "" {
		if _, err := ncio.NewConverter(info.units, ch.Units); err != nil {
			return fmt.Errorf("channel %q: %s is computed in %q and cannot be delivered in %q: %v", ch.Name, ch.Derived, info.units, ch.Units, err)
		}
	}
	return nil
}

// levelField puts the source's values at pressure target (Pa) in dst.
func levelField(s *source, target float64, d *stepData, dst []float32) {
	lv := d.slabs[s]
	if s.lv == nil {
		copy(dst, lv[0])
		return
	}
	if !s.hybrid {
		for k := 0; k < s.nk; k++ {
			pa := s.lv.Pa[s.k0+k]
			if math.Abs(pa-target) <= 1e-6*target {
				copy(dst, lv[k])
				return
			}
		}
		panic("subset: level not read") // needLevel guarantees it
	}
	interpLogP(dst, lv, s.column(d.slabs[s.ps][0]), target)
}

type sourceGetter func(request) (*source, error)

func (p *planned) buildChannel(ch pipeline.Channel, mapping map[string]string, o *options, get sourceGetter) (*outChannel, error) {
	label := fmt.Sprintf("channel %q", ch.Name)
	if ch.Derived == "" {
		r := request{std: ch.StandardName, vertical: ch.LevelPa > 0, units: ch.Units, label: label}
		if ch.StandardName != "" {
			r.names = namesFor(ch.StandardName, mapping)
		} else {
			r.names = []string{ch.Variable}
		}
		s, err := get(r)
		if err != nil {
			return nil, err
		}
		v := s.steps[0].v
		oc := &outChannel{name: ch.Name, levelPa: ch.LevelPa, longName: v.LongName()}
		oc.standardName = v.StandardName()
		if oc.standardName == "" {
			oc.standardName = mapping[v.Name()]
		}
		if oc.standardName == "" {
			oc.standardName = ch.StandardName
		}
		oc.quantity = oc.standardName
		if oc.quantity == "" {
			oc.quantity = v.Name() // no standard name anywhere: the file's name
		}
		if oc.longName == "" {
			oc.longName = ch.Name
		}
		oc.units = s.conv.To
		if ch.LevelPa > 0 {
			if err := s.needLevel(ch.LevelPa, ch.Name); err != nil {
				return nil, err
			}
			if s.hybrid {
				oc.comment = "interpolated from hybrid sigma-pressure levels (p = a*p0 + b*ps) linearly in log pressure; fill where the level is below the lowest model level or above the top"
			}
		}
		level := ch.LevelPa
		oc.compute = func(d *stepData, dst []float32) { levelField(s, level, d, dst) }
		return oc, nil
	}
	info := derivedInfo[ch.Derived]
	oc := &outChannel{name: ch.Name, quantity: ch.Derived, standardName: info.standardName,
		longName: info.longName, units: info.units}
	if ch.Units != "" {
		c, err := ncio.NewConverter(info.units, ch.Units)
		if err != nil {
			return nil, fmt.Errorf("subset: %s: %v", label, err)
		}
		oc.out, oc.units = &c, ch.Units
	}
	wind := func(vertical bool) (u, v *source, err error) {
		names := func(std string) []string { return namesFor(std, mapping) }
		u, err = get(request{std: "eastward_wind", names: names("eastward_wind"), vertical: vertical, units: "m s-1", label: label + " (eastward wind)"})
		if err != nil {
			return nil, nil, err
		}
		v, err = get(request{std: "northward_wind", names: names("northward_wind"), vertical: vertical, units: "m s-1", label: label + " (northward wind)"})
		return u, v, err
	}
	switch ch.Derived {
	case "wind_speed", "relative_vorticity":
		level := ch.LevelPa
		if ch.Derived == "relative_vorticity" && level == 0 {
			level = o.vortLevel
		}
		oc.levelPa = level
		u, v, err := wind(level > 0)
		if err != nil {
			return nil, err
		}
		if level > 0 {
			if err := u.needLevel(level, ch.Name); err != nil {
				return nil, err
			}
			if err := v.needLevel(level, ch.Name); err != nil {
				return nil, err
			}
		}
		if ch.Derived == "wind_speed" {
			oc.compute = func(d *stepData, dst []float32) {
				n := len(dst)
				uu, vv := make([]float32, n), make([]float32, n)
				levelField(u, level, d, uu)
				levelField(v, level, d, vv)
				windSpeed(dst, uu, vv)
			}
		} else {
			oc.halo = 1
			oc.comment = "centred differences on the sphere of radius 6371008.7714 m over the file's grid spacing; fill on the outermost rows"
			oc.compute = func(d *stepData, dst []float32) {
				n := len(dst)
				uu, vv := make([]float32, n), make([]float32, n)
				levelField(u, level, d, uu)
				levelField(v, level, d, vv)
				vorticity(dst, uu, vv, d.win.lat, d.win.lon, d.win.periodic)
			}
		}
	case "iwv", "ivt_u", "ivt_v", "ivt":
		q, err := get(request{std: "specific_humidity", names: namesFor("specific_humidity", mapping), vertical: true, units: "kg kg-1", label: label + " (specific humidity)"})
		if err != nil {
			return nil, err
		}
		q.needColumn(o.ivtTop, o.ivtBottom)
		var u, v *source
		if ch.Derived != "iwv" {
			if u, v, err = wind(true); err != nil {
				return nil, err
			}
			for _, s := range []*source{u, v} {
				if err := sameLevels(q.lv, s.lv); err != nil || q.hybrid && q.lv.PSVar != s.lv.PSVar {
					return nil, fmt.Errorf("subset: %s: specific humidity %q and wind %q are on different levels (hint: IVT needs q, u and v on the same levels)", label, q.varName, s.varName)
				}
				s.needColumn(o.ivtTop, o.ivtBottom)
			}
		}
		top, bottom := o.ivtTop, o.ivtBottom
		oc.layer = &[2]float64{bottom, top}
		oc.comment = fmt.Sprintf("(1/g) * integral from %g to %g Pa, g = %g m s-2, trapezoid rule in pressure over the levels where the integrand is defined (levels below the surface left out, layers cut at the limits, nothing extrapolated)", top, bottom, G0)
		kind := ch.Derived
		oc.compute = func(d *stepData, dst []float32) {
			qq := d.slabs[q]
			var psv []float32
			if q.hybrid {
				psv = d.slabs[q.ps][0]
			}
			col := q.column(psv)
			n := len(dst)
			integral := func(wind *source) []float64 {
				out := make([]float64, n)
				if wind == nil {
					integrate(out, func(k, c int) float64 { return float64(qq[k][c]) }, col, top, bottom)
					return out
				}
				// Align the wind's read range with q's.
				ww := d.slabs[wind]
				off := q.k0 - wind.k0
				integrate(out, func(k, c int) float64 {
					kk := k + off
					if kk < 0 || kk >= wind.nk {
						return math.NaN()
					}
					return float64(qq[k][c]) * float64(ww[kk][c])
				}, col, top, bottom)
				return out
			}
			switch kind {
			case "iwv":
				copy64(dst, integral(nil))
			case "ivt_u":
				copy64(dst, integral(u))
			case "ivt_v":
				copy64(dst, integral(v))
			case "ivt":
				a, b := integral(u), integral(v)
				for i := range dst {
					dst[i] = float32(math.Hypot(a[i], b[i]))
				}
			}
		}
	default:
		return nil, fmt.Errorf("subset: %s: unknown derived quantity %q", label, ch.Derived)
	}
	return oc, nil
}

func copy64(dst []float32, src []float64) {
	for i, x := range src {
		dst[i] = float32(x)
	}
}
