package world

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

const (
	// riverCoreWeight defines a plume's core for the tests: at least 70 %
	// of the plume's full strength (chosen; the mask boundary uses 0.05).
	riverCoreWeight = 0.7
	// backgroundIVTFraction is the largest share of pixels away from any
	// plume or cyclone allowed at or above 250 kg m-1 s-1 ("mostly below";
	// chosen, the demo measures about 1 % in control and 6 % in warm).
	backgroundIVTFraction = 0.10
	// float32Slack allows for IVT recomputed from float32 file values (kg
	// m-1 s-1; derived: relative rounding 6e-8 times IVT < 1e-4).
	float32Slack = 0.01
)

// Inside a planted river's core, IVT computed independently from the file
// (numpy trapezoid over 1000-300 hPa, g = 9.80665, in check_files.py) is
// above the AMS Glossary threshold of 250 kg m-1 s-1 (Ralph et al. 2018,
// confirmed in reference-values.md); away from plumes it mostly is not;
// and the truth mask agrees with that IVT.
func TestRiverIVT(t *testing.T) {
	o, sum := smallWorld(t)
	fieldsFiles := filesOf(sum, "fields")
	python(t, fieldsFiles...)
	g := newGrid(&o)
	n := g.points()
	var core, coreLow, bg, bgHigh, masked int
	minCore := math.Inf(1)
	for _, sc := range o.Scenarios {
		path := filepath.Join(o.Dir, sc.Name, fmt.Sprintf("fields_%d.nc", sc.FirstYear))
		ivt := readF32(t, path+".ivt")
		s := newSeason(&o, g, sc, 0)
		if len(ivt) != s.steps*n {
			t.Fatalf("%s: %d IVT values, want %d", path, len(ivt), s.steps*n)
		}
		f := newFields(n, s.nlev())
		for st := 0; st < s.steps; st++ {
			s.compute(f, float64(st*o.StepHours), 2)
			for k := 0; k < n; k++ {
				v := float64(ivt[st*n+k])
				w := f.riverWeight[k]
				switch {
				case f.mask[k] == 1:
				case w >= riverCoreWeight:
					core++
					minCore = math.Min(minCore, v)
					if v <= ARThreshold {
						coreLow++
					}
				case w < riverMinWeight:
					bg++
					if v >= ARThreshold {
						bgHigh++
					}
				}
				// The truth's own IVT must be what the file gives.
				if math.Abs(v-f.ivt[k]) > float32Slack+1e-5*f.ivt[k] {
					t.Fatalf("%s step %d point %d: file IVT %g, generator %g", path, st, k, v, f.ivt[k])
				}
				if f.mask[k] == 2 {
					masked++
					if v < ARThreshold-float32Slack {
						t.Errorf("%s step %d point %d: AR truth pixel with IVT %g", path, st, k, v)
					}
				}
			}
		}
	}
	if core < 20 || masked == 0 {
		t.Fatalf("only %d core pixels and %d AR truth pixels: the test world is too weak to test", core, masked)
	}
	if coreLow > 0 {
		t.Errorf("%d of %d river-core pixels have IVT <= 250 (min %.1f)", coreLow, core, minCore)
	}
	frac := float64(bgHigh) / float64(bg)
	t.Logf("river cores: %d pixels, min IVT %.0f; away from plumes and cyclones: %.2f %% of %d pixels reach 250", core, minCore, 100*frac, bg)
	if frac > backgroundIVTFraction {
		t.Errorf("%.1f %% of background pixels reach IVT 250, want at most %.0f %%", 100*frac, 100*backgroundIVTFraction)
	}
}

// Planted cyclones meet the published detection criteria of Bengtsson et
// al. (1995) and Vitart et al. (1997) (confirmed in reference-values.md)
// at the demo's 1.5 degree spacing: 850 hPa relative vorticity > 3.5e-5
// s-1, 10 m wind >= 15 m/s in a 7x7-point box, warm core summed at 700,
// 500 and 300 hPa > 3 K with the 300 hPa anomaly above the 850 hPa one,
// and 850 hPa winds stronger than 300 hPa winds. Weak storms may miss the
// warm-core sum, as in models; most truth steps must pass all.
func TestCycloneCriteria(t *testing.T) {
	const (
		vortMin      = 3.5e-5 // s-1, Bengtsson et al. 1995
		windMin      = 15.0   // m/s, 7x7 box, Bengtsson et al. 1995
		warmSumMin   = 3.0    // K, 700+500+300 hPa, Vitart et al. 1997
		passFraction = 0.75   // chosen: weak and decaying storms may fail
	)
	o := mustPreset("demo")
	o.Dir = "unused"
	o.Days = 20
	g := newGrid(&o)
	nlon, n := len(g.lons), g.points()
	lev := map[float64]int{}
	for l, p := range PressureLevels {
		lev[p] = l
	}
	var total, pass, peak300 int
	for _, sc := range o.Scenarios {
		s := newSeason(&o, g, sc, 0)
		f := newFields(n, s.nlev())
		for st := 0; st < s.steps; st++ {
			s.compute(f, float64(st*o.StepHours), 2)
			for _, a := range f.cyclones {
				ci := int(math.Round((a.p.lat - g.lats[0]) / o.Resolution))
				cj := int(math.Round((a.p.lon - g.lons[0]) / o.Resolution))
				if a.radius <= 0 || ci < 4 || cj < 4 || ci >= len(g.lats)-4 || cj >= nlon-4 {
					continue
				}
				total++
				// Relative vorticity by centred differences on the sphere,
				// maximum over the 3x3 points around the centre.
				vort := math.Inf(-1)
				l850 := lev[85000]
				for i := ci - 1; i <= ci+1; i++ {
					for j := cj - 1; j <= cj+1; j++ {
						k := i*nlon + j
						dx := 2 * o.Resolution * deg * earthRadius * math.Cos(g.lats[i]*deg)
						dy := 2 * o.Resolution * deg * earthRadius
						u := func(k int) float64 { return float64(f.ua[l850*n+k]) * math.Cos(g.lats[k/nlon]*deg) }
						dvdx := float64(f.va[l850*n+k+1]-f.va[l850*n+k-1]) / dx
						dudy := (u(k+nlon) - u(k-nlon)) / dy / math.Cos(g.lats[i]*deg)
						vort = math.Max(vort, dvdx-dudy)
					}
				}
				var wind, s850, s300 float64
				anom := make([]float64, len(PressureLevels))
				for i := ci - 3; i <= ci+3; i++ {
					for j := cj - 3; j <= cj+3; j++ {
						k := i*nlon + j
						wind = math.Max(wind, math.Hypot(float64(f.u10[k]), float64(f.v10[k])))
						s850 += math.Hypot(float64(f.ua[lev[85000]*n+k]), float64(f.va[lev[85000]*n+k])) / 49
						s300 += math.Hypot(float64(f.ua[lev[30000]*n+k]), float64(f.va[lev[30000]*n+k])) / 49
						for l := range PressureLevels {
							anom[l] -= float64(f.ta[l*n+k]) / 49
						}
					}
				}
				for l := range PressureLevels {
					anom[l] += float64(f.ta[l*n+ci*nlon+cj])
				}
				warm := anom[lev[70000]] + anom[lev[50000]] + anom[lev[30000]]
				ok := vort > vortMin && wind >= windMin && warm > warmSumMin && anom[lev[30000]] > anom[lev[85000]] && s850 > s300
				if ok {
					pass++
				}
				best := 0
				for l := range anom {
					if anom[l] > anom[best] {
						best = l
					}
				}
				if PressureLevels[best] == 30000 {
					peak300++
				}
			}
		}
	}
	if total < 40 {
		t.Fatalf("only %d cyclone truth steps", total)
	}
	t.Logf("%d of %d cyclone steps meet all criteria; warm core peaks at 300 hPa in %d", pass, total, peak300)
	if float64(pass) < passFraction*float64(total) {
		t.Errorf("%d of %d cyclone steps meet the detection criteria, want at least %.0f %%", pass, total, 100*passFraction)
	}
	if float64(peak300) < 0.9*float64(total) {
		t.Errorf("the warm-core anomaly peaks at 300 hPa in only %d of %d steps", peak300, total)
	}
}

// The hybrid mode samples the same atmosphere on terrain-following levels:
// pressures from the CF formula terms (p = a p0 + b ps, appendix D,
// evaluated in check_files.py) are ordered and above the ground, some
// pressure levels lie below the ground, and fields interpolated to 850 and
// 500 hPa (linear in log p) match the pressure-level file of the same seed.
func TestHybridMatchesPressureLevels(t *testing.T) {
	base := mustPreset("tiny")
	base.Days = 1
	base.Scenarios = base.Scenarios[:1]
	base.Scenarios[0].LastYear = base.Scenarios[0].FirstYear
	run := func(name, vertical string) string {
		o := base
		o.Dir = filepath.Join(testRoot, name)
		o.Vertical = vertical
		if _, err := Generate(context.Background(), o); err != nil {
			t.Fatal(err)
		}
		return filepath.Join(o.Dir, "control", "fields_1991.nc")
	}
	pp := run("vert-p", "pressure")
	hp := run("vert-h", "hybrid")
	rep := python(t, hp)[hp]
	if rep.HybridOrdered == nil || !*rep.HybridOrdered || !*rep.HybridAbove {
		t.Fatalf("hybrid level pressures: ordered %v, above ground %v", rep.HybridOrdered, rep.HybridAbove)
	}
	if *rep.PSMin >= 92500 {
		t.Errorf("minimum surface pressure %.0f Pa: no pressure level below the ground, the interpolation has nothing to handle", *rep.PSMin)
	}
	if v := rep.Vars["lev"]["formula_terms"]; v != "a: a b: b p0: p0 ps: ps" {
		t.Errorf("formula_terms %v", v)
	}
	// Tolerances (derived from the profile shapes): linear-in-log-p
	// interpolation across 50-90 hPa layers of piecewise-linear profiles.
	tol := map[string]float64{"ta": 0.6, "ua": 1.0, "hus": 6e-4}
	std := map[string]string{"ta": "air_temperature", "ua": "eastward_wind", "hus": "specific_humidity"}
	plev := map[int]int{85000: 2, 50000: 4}
	for _, name := range []string{"ta", "ua", "hus"} {
		ref := ncioRead(t, pp, std[name])
		for target, l := range plev {
			got := readF32(t, fmt.Sprintf("%s.%s%d", hp, name, target))
			steps := base.Days * 24 / base.StepHours
			npts := len(got) / steps
			worst, cmp := 0.0, 0
			for st := 0; st < steps; st++ {
				for k := 0; k < npts; k++ {
					h := float64(got[st*npts+k])
					if math.IsNaN(h) {
						continue // the level is below the lowest model level
					}
					p := float64(ref[(st*len(PressureLevels)+l)*npts+k])
					worst = math.Max(worst, math.Abs(h-p))
					cmp++
				}
			}
			if cmp == 0 {
				t.Fatalf("%s at %d Pa: nothing to compare", name, target)
			}
			t.Logf("%s at %d Pa: %d points compared, largest difference %.3g", name, target, cmp, worst)
			if worst > tol[name] {
				t.Errorf("%s at %d Pa: hybrid interpolated differs from pressure levels by up to %g (tolerance %g)", name, target, worst, tol[name])
			}
		}
	}
}

// Scenario differences and trends as planned: warm has more and stronger
// cyclones and moister rivers than control, and within each scenario counts
// do not fall and intensities rise year by year.
func TestScenarioPlanning(t *testing.T) {
	o := mustPreset("demo")
	hours := float64(o.Days * 24)
	meanDeficit := func(cs []*cyclonePlan) float64 {
		var d float64
		for _, c := range cs {
			d += c.peakDeficit
		}
		return d / float64(len(cs))
	}
	meanMoisture := func(rs []*riverPlan) float64 {
		var m float64
		for _, r := range rs {
			m += r.moisture
		}
		return m / float64(len(rs))
	}
	ctl, warm := o.Scenarios[0], o.Scenarios[1]
	prev := map[string][3]float64{}
	for i := range ctl.Years() {
		for _, sc := range []Scenario{ctl, warm} {
			cs := planCyclones(o.Seed, sc, i, sc.FirstYear+i, hours)
			rs := planRivers(o.Seed, sc, i, sc.FirstYear+i, hours)
			cur := [3]float64{float64(len(cs)), meanDeficit(cs), meanMoisture(rs)}
			if p, ok := prev[sc.Name]; ok {
				if cur[0] < p[0] || cur[1] <= p[1] || cur[2] <= p[2] {
					t.Errorf("%s year %d: (count, deficit, moisture) %v after %v", sc.Name, i, cur, p)
				}
			}
			prev[sc.Name] = cur
			if len(cs) < 3 || len(rs) < 3 {
				t.Errorf("%s year %d: %d cyclones, %d rivers; want several of each", sc.Name, i, len(cs), len(rs))
			}
		}
		c, w := prev[ctl.Name], prev[warm.Name]
		if w[0] <= c[0] || w[1] <= c[1] || w[2] <= c[2] {
			t.Errorf("year %d: warm %v not above control %v", i, w, c)
		}
	}
}

func TestGeographyAndRegions(t *testing.T) {
	for _, c := range []struct {
		lat, lon float64
		want     string
	}{
		{30, 55, Orvania}, {50, 110, Kessary}, {33.5, 107, IsleOfMaren}, {21.4, 83.2, SerratIslands}, {20, 100, ""},
	} {
		if got := LandmassAt(c.lat, c.lon); got != c.want {
			t.Errorf("LandmassAt(%g, %g) = %q, want %q", c.lat, c.lon, got, c.want)
		}
	}
	b, err := RegionsGeoJSON()
	if err != nil {
		t.Fatal(err)
	}
	// RFC 7946: a FeatureCollection; Polygon rings are closed, have at
	// least four positions and exterior rings are counterclockwise
	// (section 3.1.6); positions are [longitude, latitude].
	var fc struct {
		Type     string
		Features []struct {
			Type       string
			Properties map[string]string
			Geometry   struct {
				Type        string
				Coordinates [][][2]float64
			}
		}
	}
	if err := json.Unmarshal(b, &fc); err != nil {
		t.Fatal(err)
	}
	if fc.Type != "FeatureCollection" || len(fc.Features) != len(Regions) {
		t.Fatalf("type %q with %d features", fc.Type, len(fc.Features))
	}
	names := map[string]bool{}
	for _, f := range fc.Features {
		name := f.Properties["name"]
		if f.Type != "Feature" || f.Geometry.Type != "Polygon" || name == "" || names[name] {
			t.Errorf("feature %q: type %s geometry %s", name, f.Type, f.Geometry.Type)
		}
		names[name] = true
		ring := f.Geometry.Coordinates[0]
		if len(ring) < 4 || ring[0] != ring[len(ring)-1] {
			t.Errorf("%s: ring not closed or too short", name)
		}
		var area float64
		for i := 0; i+1 < len(ring); i++ {
			area += ring[i][0]*ring[i+1][1] - ring[i+1][0]*ring[i][1]
			if lon, lat := ring[i][0], ring[i][1]; lon < -180 || lon > 180 || lat < -90 || lat > 90 {
				t.Errorf("%s: position %v outside RFC 7946 ranges", name, ring[i])
			}
		}
		if area <= 0 {
			t.Errorf("%s: exterior ring is clockwise", name)
		}
	}
	if got := strings.Join(RegionsAt(20, 83), ","); got != "serrat_sea,halcyon_basin" {
		t.Errorf("regions at the Serrat Islands: %s", got)
	}
}

// Category boundaries of the NWS Saffir-Simpson scale of 2012 and the
// tropical-storm threshold, in knots (confirmed in reference-values.md),
// with 1 kt = 1852/3600 m/s exactly.
func TestSaffirSimpson(t *testing.T) {
	kt := 1852.0 / 3600
	for _, c := range []struct {
		knots float64
		want  string
	}{
		{33.9, "TD"}, {34, "TS"}, {63.9, "TS"}, {64, "1"}, {82.9, "1"}, {83, "2"}, {95.9, "2"},
		{96, "3"}, {112.9, "3"}, {113, "4"}, {136.9, "4"}, {137, "5"}, {180, "5"},
	} {
		if got := SaffirSimpson(c.knots * kt); got != c.want {
			t.Errorf("%g kt: category %s, want %s", c.knots, got, c.want)
		}
	}
	if math.Abs(TCWindThreshold-17.49) > 0.005 { // 34 kt = 17.49 m/s, NWS (reference-values.md)
		t.Errorf("TCWindThreshold = %g", TCWindThreshold)
	}
}

func TestValidate(t *testing.T) {
	for _, c := range []struct {
		edit func(*Options)
		want string
	}{
		{func(o *Options) { o.Dir = "" }, "Dir"},
		{func(o *Options) { o.StepHours = 4 }, "StepHours"},
		{func(o *Options) { o.Resolution = 0.7 }, "Resolution"},
		{func(o *Options) { o.LonMax = 200 }, "LonMin/LonMax"},
		{func(o *Options) { o.Vertical = "sigma" }, "Vertical"},
		{func(o *Options) { o.Scenarios[1].Name = "Warm Run" }, "Scenarios[1].Name"},
		{func(o *Options) { o.Scenarios[1].Name = "control" }, "unique"},
		{func(o *Options) { o.SeasonStart = 350 }, "SeasonStart"},
	} {
		o := mustPreset("demo")
		o.Dir = "x"
		o.Scenarios = append([]Scenario(nil), o.Scenarios...)
		c.edit(&o)
		err := o.Validate()
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("want an error naming %q, got %v", c.want, err)
		}
	}
	for _, name := range []string{"demo", "bench", "tiny"} {
		o := mustPreset(name)
		o.Dir = "x"
		if err := o.Validate(); err != nil {
			t.Errorf("preset %s: %v", name, err)
		}
	}
	if _, err := Preset("huge"); err == nil {
		t.Error("unknown preset accepted")
	}
}

// Options that change only the layout leave the atmosphere alone: with
// BelowSurface "fill" the pressure levels below the ground (and only
// those) hold _FillValue, and LatDescending writes the same fields north
// to south.
func TestLayoutOptions(t *testing.T) {
	base := mustPreset("tiny")
	base.Days = 1
	base.Scenarios = base.Scenarios[:1]
	base.Scenarios[0].LastYear = base.Scenarios[0].FirstYear
	run := func(name string, edit func(*Options)) string {
		o := base
		o.Dir = filepath.Join(testRoot, name)
		edit(&o)
		if _, err := Generate(context.Background(), o); err != nil {
			t.Fatal(err)
		}
		return filepath.Join(o.Dir, "control", "fields_1991.nc")
	}
	plain := run("layout-plain", func(*Options) {})
	fill := run("layout-fill", func(o *Options) { o.BelowSurface = "fill" })
	north := run("layout-north", func(o *Options) { o.LatDescending = true })

	ps := ncioRead(t, plain, "surface_air_pressure")
	ta := ncioRead(t, plain, "air_temperature")
	taFill := ncioRead(t, fill, "air_temperature")
	npts := len(ps) / 4
	var below int
	for st := 0; st < 4; st++ {
		for l, p := range PressureLevels {
			for k := 0; k < npts; k++ {
				i := (st*len(PressureLevels)+l)*npts + k
				under := p > float64(ps[st*npts+k])
				if under {
					below++
				}
				if isNaN := math.IsNaN(float64(taFill[i])); isNaN != under || (!under && taFill[i] != ta[i]) {
					t.Fatalf("step %d level %g point %d: ps %g, filled value %g, plain %g", st, p, k, ps[st*npts+k], taFill[i], ta[i])
				}
			}
		}
	}
	if below == 0 {
		t.Error("no pressure level below the ground: the fill option was not exercised")
	}

	g := newGrid(&base)
	nlat, nlon := len(g.lats), len(g.lons)
	taNorth := ncioRead(t, north, "air_temperature")
	for blk := 0; blk < len(ta)/npts; blk++ {
		for i := 0; i < nlat; i++ {
			for j := 0; j < nlon; j++ {
				a := ta[blk*npts+i*nlon+j]
				b := taNorth[blk*npts+(nlat-1-i)*nlon+j]
				if a != b {
					t.Fatalf("latitude order changed the field: %g vs %g", a, b)
				}
			}
		}
	}
}

func TestGenerateCancelled(t *testing.T) {
	o := mustPreset("tiny")
	o.Dir = filepath.Join(testRoot, "cancelled")
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Generate(ctx, o); err == nil {
		t.Fatal("a cancelled generation succeeded")
	}
	partial, _ := filepath.Glob(filepath.Join(o.Dir, "*", ".*.partial"))
	if len(partial) > 0 {
		t.Errorf("unfinished files left behind: %v", partial)
	}
}
