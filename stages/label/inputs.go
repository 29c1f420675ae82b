package label

import (
	"fmt"
	"math"
	"strings"
)

// speed is a wind speed read from a wind_speed channel or formed from an
// eastward/northward pair.
type speed struct {
	s, u, v *Channel
}

func (fl *Fields) findSpeed(level float64) *speed {
	if c := fl.Find(level, QWind); c != nil {
		return &speed{s: c}
	}
	u, v := fl.Find(level, QU), fl.Find(level, QV)
	if u != nil && v != nil {
		return &speed{u: u, v: v}
	}
	return nil
}

// vorticity850 is read from a vorticity channel, or computed from the
// winds at 850 hPa.
type vorticitySrc struct {
	c    *Channel
	u, v *Channel
}

// tcPlan names the channels the tropical-cyclone detection reads; nil
// entries are not needed or not available for optional diagnostics.
type tcPlan struct {
	slp               *Channel
	vort              *vorticitySrc
	wind10            *speed
	t850, t700        *Channel
	t500, t300        *Channel
	wind850, wind300  *speed
	needWind10ForMask bool
}

// arSource says how the AR quantity is obtained.
type arSource struct {
	quantity string // "ivt" or "iwv": what thresholds apply to
	ivt      *Channel
	ivtU     *Channel
	ivtV     *Channel
	levels   []float64 // q, u, v on these levels (Pa), integrated here
	q, u, v  []*Channel
	iwv      *Channel
}

// missingInput collects, per criterion, what it needs and lacks, so that
// one error lists every gap at once.
type missingInput struct {
	lines []string
}

func (m *missingInput) add(who, needs, lacks string) {
	m.lines = append(m.lines, fmt.Sprintf("  - %s needs %s; missing: %s", who, needs, lacks))
}

func (m *missingInput) err(fl *Fields, hint string) error {
	if len(m.lines) == 0 {
		return nil
	}
	return fmt.Errorf("%s lacks inputs the label stage needs:\n%s\n  channels present: %s\n  hint: %s: %w",
		fl.Path, strings.Join(m.lines, "\n"), fl.Describe(), hint, errMissing)
}

func hPa(p float64) string { return fmt.Sprintf("%g hPa", p/100) }

// planTC resolves the TC channels for the switched-on criteria.
func planTC(fl *Fields, c *TCConfig, mask bool) (*tcPlan, error) {
	var m missingInput
	p := &tcPlan{}
	p.slp = fl.Find(0, QSLP)
	if p.slp == nil {
		m.add("tropical-cyclone detection (SLP minima)", "sea-level pressure ("+QSLP+")", QSLP)
	}
	if vc := fl.Find(85000, QVort, QVortCF); vc != nil {
		p.vort = &vorticitySrc{c: vc}
	} else if u, v := fl.Find(85000, QU), fl.Find(85000, QV); u != nil && v != nil {
		p.vort = &vorticitySrc{u: u, v: v}
	}
	if c.Has(CritVorticity) && p.vort == nil {
		m.add("tropical-cyclone criterion vorticity", "relative vorticity at 850 hPa (quantity "+QVort+" or "+QVortCF+", or "+QU+" and "+QV+" at 850 hPa)", "850 hPa vorticity")
	}
	p.wind10 = fl.findSpeed(0)
	if p.wind10 == nil {
		lack := "10 m wind (" + QWind + " without level, or " + QU + " and " + QV + " without level)"
		if c.Has(CritMaxWind) {
			m.add("tropical-cyclone criterion max_wind", "the 10 m wind speed", lack)
		}
		if mask {
			m.add("the tropical-cyclone mask (pixels within the gale-wind radius)", "the 10 m wind speed", lack)
		}
	}
	p.t850, p.t700 = fl.Find(85000, QTemp), fl.Find(70000, QTemp)
	p.t500, p.t300 = fl.Find(50000, QTemp), fl.Find(30000, QTemp)
	if c.Has(CritWarmCore) {
		var lacks []string
		for _, x := range []struct {
			c *Channel
			l float64
		}{{p.t850, 85000}, {p.t700, 70000}, {p.t500, 50000}, {p.t300, 30000}} {
			if x.c == nil {
				lacks = append(lacks, QTemp+" at "+hPa(x.l))
			}
		}
		if len(lacks) > 0 {
			m.add("tropical-cyclone criterion warm_core", QTemp+" at 850, 700, 500 and 300 hPa", strings.Join(lacks, ", "))
		}
	}
	p.wind850, p.wind300 = fl.findSpeed(85000), fl.findSpeed(30000)
	if c.Has(CritWindProfile) {
		var lacks []string
		if p.wind850 == nil {
			lacks = append(lacks, "wind at 850 hPa")
		}
		if p.wind300 == nil {
			lacks = append(lacks, "wind at 300 hPa")
		}
		if len(lacks) > 0 {
			m.add("tropical-cyclone criterion wind_profile", "the wind speed ("+QWind+", or "+QU+" and "+QV+") at 850 and 300 hPa", strings.Join(lacks, ", "))
		}
	}
	if err := m.err(fl, "add the channels to the campaign's channels section, or leave the criterion out of tc_criteria (or tropical_cyclone out of classes)"); err != nil {
		return nil, err
	}
	return p, nil
}

// planAR picks the AR quantity: an ivt channel; else ivt_u and ivt_v; else
// q, u and v on at least two common pressure levels reaching top; else
// column water vapour (IWV), with its own threshold.
func planAR(fl *Fields, c *ARConfig) (*arSource, error) {
	if ch := fl.Find(0, QIVT); ch != nil {
		return &arSource{quantity: QIVT, ivt: ch}, nil
	}
	u, v := fl.Find(0, QIVTU, QIVTUCF), fl.Find(0, QIVTV, QIVTVCF)
	if u != nil && v != nil {
		return &arSource{quantity: QIVT, ivtU: u, ivtV: v}, nil
	}
	var levels []float64
	for _, l := range fl.Levels(QQ) {
		if fl.Find(l, QU) != nil && fl.Find(l, QV) != nil {
			levels = append(levels, l)
		}
	}
	reachesTop := len(levels) >= 2 && levels[len(levels)-1] <= c.IVTTop+levelTolP
	if reachesTop {
		s := &arSource{quantity: QIVT, levels: levels}
		for _, l := range levels {
			s.q = append(s.q, fl.Find(l, QQ))
			s.u = append(s.u, fl.Find(l, QU))
			s.v = append(s.v, fl.Find(l, QV))
		}
		return s, nil
	}
	if ch := fl.Find(0, QIWV, QIWVCF); ch != nil {
		return &arSource{quantity: QIWV, iwv: ch}, nil
	}
	var m missingInput
	lack := "no ivt, no ivt_u/ivt_v, no iwv channel"
	if len(levels) > 0 {
		ls := make([]string, len(levels))
		for i, l := range levels {
			ls[i] = hPa(l)
		}
		lack += fmt.Sprintf("; q, u, v only at %s, not up to %s", strings.Join(ls, ", "), hPa(c.IVTTop))
	}
	m.add("atmospheric-river detection",
		"IVT (quantity ivt, or ivt_u and ivt_v), or "+QQ+", "+QU+" and "+QV+" on at least two levels up to ar_ivt_top, or IWV (quantity iwv or "+QIWVCF+")", lack)
	return nil, m.err(fl, "add an ivt (or iwv) channel to the campaign, or leave atmospheric_river out of classes")
}

// readSpeed reads a wind speed at one step.
func (fl *Fields) readSpeed(s *speed, step int, buf, tmp []float64) ([]float64, error) {
	if s.s != nil {
		return fl.Read(s.s, step, buf)
	}
	u, err := fl.Read(s.u, step, buf)
	if err != nil {
		return nil, err
	}
	v, err := fl.Read(s.v, step, tmp)
	if err != nil {
		return nil, err
	}
	for i := range u {
		u[i] = math.Hypot(u[i], v[i])
	}
	return u, nil
}

// readAR reads the AR quantity (IVT or IWV) at one step.
func (fl *Fields) readAR(s *arSource, step int, top float64) ([]float64, error) {
	switch {
	case s.ivt != nil:
		return fl.Read(s.ivt, step, nil)
	case s.ivtU != nil:
		u, err := fl.Read(s.ivtU, step, nil)
		if err != nil {
			return nil, err
		}
		v, err := fl.Read(s.ivtV, step, nil)
		if err != nil {
			return nil, err
		}
		for i := range u {
			u[i] = math.Hypot(u[i], v[i])
		}
		return u, nil
	case s.iwv != nil:
		return fl.Read(s.iwv, step, nil)
	}
	q := make([][]float64, len(s.levels))
	u := make([][]float64, len(s.levels))
	v := make([][]float64, len(s.levels))
	var err error
	for k := range s.levels {
		if q[k], err = fl.Read(s.q[k], step, nil); err != nil {
			return nil, err
		}
		if u[k], err = fl.Read(s.u[k], step, nil); err != nil {
			return nil, err
		}
		if v[k], err = fl.Read(s.v[k], step, nil); err != nil {
			return nil, err
		}
	}
	return IVTFromLevels(s.levels, q, u, v, top), nil
}
