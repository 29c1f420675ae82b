package label

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/squall-climate/squall/stages/grid"
	"github.com/squall-climate/squall/stages/ncio"
)

// pstormPath is a real sample file from Debian libncarg-data: 6-hourly
// sea-level pressure (Pa) of a January winter storm over North America,
// 33 x 36 points (lat 20..60 by 1.25, lon -140..-52.5 by 2.5), 64 steps,
// with _FillValue outside a projected domain.
const pstormPath = "/usr/share/ncarg/data/cdf/Pstorm.cdf"

// pstormFields converts Pstorm.cdf to the shared fields.nc layout (one
// SLP channel). The file counts hours from its start ("timestep" 0, 6,
// ...) without a date; we anchor it at an arbitrary January date.
func pstormFields(t *testing.T) string {
	t.Helper()
	if _, err := os.Stat(pstormPath); err != nil {
		t.Skip("Pstorm.cdf missing (install Debian libncarg-data)")
	}
	f, err := ncio.Open(pstormPath)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	read := func(name string) []float64 {
		v, err := f.Var(name)
		if err != nil {
			t.Fatal(err)
		}
		x, err := v.ReadFloat64(nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		return x
	}
	lat, lon, steps, p := read("lat"), read("lon"), read("timestep"), read("p")
	g, err := grid.New(lat, lon)
	if err != nil {
		t.Fatal(err)
	}
	n := g.Len()
	ch := testChannel{name: "p", quantity: QSLP, units: "Pa"}
	for s := range steps {
		ch.data = append(ch.data, p[s*n:(s+1)*n])
	}
	out := filepath.Join(t.TempDir(), FieldsFile)
	writeFields(t, out, g, steps, "standard", []testChannel{ch})
	return out
}

// pstormReference returns, per step, the lowest SLP among points whose
// 7x7 box lies inside the grid and holds no fill value, computed by
// numpy from the file read with python3-netcdf4 (Debian, /usr/bin/python3):
// an independent reading of where the deepest low is.
func pstormReference(t *testing.T) [][2]float64 {
	t.Helper()
	const py = "/usr/bin/python3"
	script := `
import netCDF4, numpy as np
d = netCDF4.Dataset("` + pstormPath + `")
p = d["p"][:].filled(np.nan); lat = d["lat"][:]; lon = d["lon"][:]
nt, ny, nx = p.shape
for t in range(nt):
    a = p[t]; best = (np.inf, 0, 0)
    for j in range(3, ny-3):
        for i in range(3, nx-3):
            w = a[j-3:j+4, i-3:i+4]
            if not np.isnan(w).any() and a[j, i] < best[0]:
                best = (a[j, i], j, i)
    print(float(lat[best[1]]), float(lon[best[2]]))
`
	out, err := exec.Command(py, "-c", script).CombinedOutput()
	if err != nil {
		t.Skipf("reference python3-netcdf4/numpy unavailable (%v: %s)", err, out)
	}
	var ref [][2]float64
	for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		f := strings.Fields(line)
		la, _ := strconv.ParseFloat(f[0], 64)
		lo, _ := strconv.ParseFloat(f[1], 64)
		ref = append(ref, [2]float64{la, lo})
	}
	return ref
}

// pstormConfig is pressure-only tracking: no per-step criterion beyond the
// SLP minimum of its 7x7-point box (not widened to tc_box_width), 150 km/h (900 km per 6 h: extratropical
// lows move faster than tropical ones, and on a 2.5 degree grid the
// minimum jumps by a grid length), one missed step allowed, 48 h lifetime.
func pstormConfig(t *testing.T) Config {
	v := DefaultValues()
	v["classes"] = []string{ClassTC}
	v["tc_criteria"] = []string{}
	v["tc_max_speed"] = 150.0
	v["tc_box_width"] = 0.0 // the 7x7-point box of the numpy reference
	cfg, err := ParseConfig(v)
	if err != nil {
		t.Fatal(err)
	}
	cfg.TracksOnly = true
	return cfg
}

func TestPstormTracker(t *testing.T) {
	fp := pstormFields(t)
	ref := pstormReference(t)
	fl, err := OpenFields(fp)
	if err != nil {
		t.Fatal(err)
	}
	defer fl.Close()
	cfg := pstormConfig(t)
	res, err := Label(context.Background(), fl, &cfg, "", nil)
	if err != nil {
		t.Fatal(err)
	}
	// The storm crosses the continent from the Rockies to Labrador over
	// steps 47..59 (the reference low moves from 42.5N 112.5W to 56.25N
	// 70W; at step 60 it reaches the grid's northern edge, 60N, where no
	// box is complete). One track must hold it at every one of these
	// steps, within about one grid step (2.5 degrees of longitude is
	// under 265 km north of 20N) of the reference.
	const first, last, near = 47, 59, 300e3
	var storm *Track
	for i := range res.Tracks {
		tr := &res.Tracks[i]
		for _, p := range tr.Points {
			if p.Step == first && grid.Distance(p.Lat, p.Lon, ref[first][0], ref[first][1]) <= near {
				storm = tr
			}
		}
	}
	if storm == nil {
		t.Fatalf("no track passes the reference low at step %d (%v); tracks: %s", first, ref[first], describeTracks(res.Tracks))
	}
	at := map[int]Candidate{}
	for _, p := range storm.Points {
		at[p.Step] = p
	}
	for s := first; s <= last; s++ {
		p, ok := at[s]
		if !ok {
			t.Errorf("track %d has no point at step %d (reference low at %v)", storm.ID, s, ref[s])
			continue
		}
		if d := grid.Distance(p.Lat, p.Lon, ref[s][0], ref[s][1]); d > near {
			t.Errorf("step %d: track at %g,%g is %.0f km from the reference low %v", s, p.Lat, p.Lon, d/1e3, ref[s])
		}
	}
	t.Logf("storm track %d: %d points, steps %d..%d, %s -> %s, min SLP %.0f Pa", storm.ID, len(storm.Points),
		storm.Points[0].Step, storm.Points[len(storm.Points)-1].Step,
		latlon(storm.Points[0]), latlon(storm.Points[len(storm.Points)-1]), minSLP(storm))
}

func TestPstormRejectedAsTC(t *testing.T) {
	fp := pstormFields(t)
	// With the published criteria the stage refuses: the file has no
	// vorticity, wind or temperature, and the error says which criterion
	// needs what.
	_, err := runLabel(t, fp, map[string]any{"classes": []string{ClassTC}})
	if err == nil {
		t.Fatal("TC labelling of a pressure-only file succeeded")
	}
	if !errors.Is(err, errMissing) {
		t.Errorf("error does not wrap errMissing: %v", err)
	}
	for _, want := range []string{
		"criterion vorticity", "criterion max_wind", "criterion warm_core", "criterion wind_profile",
		"air_temperature at 850 hPa", "wind at 300 hPa", "tropical-cyclone mask", FieldsFile, "p (air_pressure_at_mean_sea_level)", "hint:",
	} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error lacks %q:\n%v", want, err)
		}
	}
	// With the pressure-only tracker the storm is found (TestPstormTracker),
	// but the genesis rule rejects it: it forms poleward of 40 degrees
	// (from memory default), as extratropical storms do.
	fl, err := OpenFields(fp)
	if err != nil {
		t.Fatal(err)
	}
	defer fl.Close()
	cfg := pstormConfig(t)
	cfg.TCConf.Criteria = []string{CritGenesisLat}
	res, err := Label(context.Background(), fl, &cfg, "", nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, tr := range res.Tracks {
		for _, p := range tr.Points {
			if p.Step == 50 && p.Lat > 33 && p.Lon > -105 && p.Lon < -95 {
				t.Errorf("storm kept as a TC with the genesis rule: track %d starts at %s", tr.ID, latlon(tr.Points[0]))
			}
		}
	}
}

func latlon(p Candidate) string { return fmt.Sprintf("%.2fN %.2fE (step %d)", p.Lat, p.Lon, p.Step) }

func minSLP(t *Track) float64 {
	m := math.Inf(1)
	for _, p := range t.Points {
		m = math.Min(m, p.SLP)
	}
	return m
}

func describeTracks(ts []Track) string {
	var b strings.Builder
	for _, t := range ts {
		fmt.Fprintf(&b, "\n  %d: %d points %s .. %s", t.ID, len(t.Points), latlon(t.Points[0]), latlon(t.Points[len(t.Points)-1]))
	}
	return b.String()
}
