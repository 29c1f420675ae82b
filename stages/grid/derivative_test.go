package grid

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

// field evaluates f(lat, lon) (degrees) at every grid point.
func field(g *Grid, f func(lat, lon float64) float64) []float64 {
	out := make([]float64, g.Len())
	for i, lat := range g.Lat {
		for j, lon := range g.Lon {
			out[g.Index(i, j)] = f(lat, lon)
		}
	}
	return out
}

func TestVorticitySolidBody(t *testing.T) {
	// Solid-body rotation about the polar axis, u = U cos(phi), v = 0, has
	// vorticity 2 U sin(phi) / R (derived analytically). The centred
	// difference of cos^2 gives exactly 2 U sin(phi)/R * sin(2h)/(2h) for
	// latitude step h (derived), so interior rows are checked against that
	// to rounding, and against the analytic value within (2h)^2/6.
	const U = 20.0
	for _, g := range []*Grid{
		mustRegular(t, -89.5, 1, 180, 0.5, 1, 360),
		mustRegular(t, 88.75, -2.5, 72, -180, 2.5, 144), // north-to-south
		mustRegular(t, 10, 0.5, 41, 100, 0.5, 30),       // regional
	} {
		u := field(g, func(lat, _ float64) float64 { return U * math.Cos(lat*deg2rad) })
		v := make([]float64, g.Len())
		z, err := g.RelativeVorticity(u, v)
		if err != nil {
			t.Fatal(err)
		}
		h := g.DLat() * deg2rad
		factor := math.Sin(2*h) / (2 * h)
		for i, lat := range g.Lat {
			exact := 2 * U * math.Sin(lat*deg2rad) / EarthRadius
			for j := range g.NLon() {
				got := z[g.Index(i, j)]
				if i == 0 || i == g.NLat()-1 {
					// One-sided first-order difference at the outer rows:
					// error of order h * |d2(cos^2)/dphi2| / (R cos phi)
					// relative to U (derived bound with margin 2).
					tol := 2 * U * h / (EarthRadius * math.Cos(lat*deg2rad))
					if math.Abs(got-exact) > tol {
						t.Errorf("%s edge row %d: zeta %g, want %g within %g", g, i, got, exact, tol)
					}
					continue
				}
				if math.Abs(got-exact*factor) > 1e-9*2*U/EarthRadius {
					t.Fatalf("%s row %d: zeta %.15g, discrete exact %.15g", g, i, got, exact*factor)
				}
				if math.Abs(got-exact) > (2*h)*(2*h)/6*2*U/EarthRadius {
					t.Fatalf("%s row %d: zeta %g, analytic %g", g, i, got, exact)
				}
			}
		}
		// Solid-body rotation is non-divergent (derived); centred
		// differences of u = U cos(phi) along longitude vanish exactly.
		d, _ := g.Divergence(u, v)
		for k, x := range d {
			if math.Abs(x) > 1e-20 {
				t.Fatalf("%s: divergence %g at %d, want 0", g, x, k)
			}
		}
	}
}

func TestVorticityTiltedRotation(t *testing.T) {
	// Solid-body rotation about the axis through (0N, 0E): the velocity
	// omega x r with |omega| = U/R has u = -U sin(phi) cos(lambda),
	// v = U sin(lambda), vorticity 2 U cos(phi) cos(lambda) / R and zero
	// divergence (derived analytically). Unlike rotation about the pole it
	// exercises dv/dlambda, and the date line on a periodic grid. The
	// centred differences give exactly (derived)
	//   zeta_h = U cos(lambda) [sin(k)/k + cos(2 phi) sin(2h)/(2h)] / (R cos phi)
	// for latitude step h and longitude step k, and divergence
	//   U sin(phi) sin(lambda) [sin(k)/k - sin(h)/h] / (R cos phi),
	// zero when h = k.
	const U = 15.0
	g := mustRegular(t, -89, 2, 90, -179, 2, 180)
	u := field(g, func(lat, lon float64) float64 { return -U * math.Sin(lat*deg2rad) * math.Cos(lon*deg2rad) })
	v := field(g, func(_, lon float64) float64 { return U * math.Sin(lon*deg2rad) })
	z, _ := g.RelativeVorticity(u, v)
	d, _ := g.Divergence(u, v)
	h := g.DLat() * deg2rad
	k := g.DLon() * deg2rad
	scale := U / EarthRadius
	for i := 1; i < g.NLat()-1; i++ {
		p := g.Lat[i] * deg2rad
		for j, lon := range g.Lon {
			l := lon * deg2rad
			want := U * math.Cos(l) * (math.Sin(k)/k + math.Cos(2*p)*math.Sin(2*h)/(2*h)) / (EarthRadius * math.Cos(p))
			got := z[g.Index(i, j)]
			if math.Abs(got-want) > 1e-9*scale/math.Cos(p) {
				t.Fatalf("lat %g lon %g: zeta %.15g, discrete exact %.15g", g.Lat[i], lon, got, want)
			}
			analytic := 2 * U * math.Cos(p) * math.Cos(l) / EarthRadius
			if math.Abs(got-analytic) > 2*(h*h)*scale/math.Cos(p) {
				t.Fatalf("lat %g lon %g: zeta %g, analytic %g", g.Lat[i], lon, got, analytic)
			}
			if x := d[g.Index(i, j)]; math.Abs(x) > 1e-9*scale/math.Cos(p) {
				t.Fatalf("lat %g lon %g: divergence %g, want 0", g.Lat[i], lon, x)
			}
		}
	}
}

func TestVorticityMissingValues(t *testing.T) {
	g := mustRegular(t, -10, 1, 21, 0, 1, 30)
	const U = 10.0
	u := field(g, func(lat, _ float64) float64 { return U * math.Cos(lat*deg2rad) })
	v := make([]float64, g.Len())
	hole := g.Index(10, 15)
	u[hole] = math.NaN()
	z, _ := g.RelativeVorticity(u, v)
	if !math.IsNaN(z[hole]) {
		t.Errorf("vorticity at a missing point = %g, want NaN", z[hole])
	}
	// The rows beside the hole fall back to one-sided differences: finite
	// and within the first-order error of the analytic value (derived).
	h := g.DLat() * deg2rad
	for _, k := range []int{g.Index(9, 15), g.Index(11, 15)} {
		i, _ := g.RowCol(k)
		exact := 2 * U * math.Sin(g.Lat[i]*deg2rad) / EarthRadius
		if math.IsNaN(z[k]) || math.Abs(z[k]-exact) > 2*U*h/EarthRadius {
			t.Errorf("beside the hole, row %d: zeta %g, want about %g", i, z[k], exact)
		}
	}
	// A point whose neighbours along latitude are both missing gets NaN.
	u[g.Index(5, 3)], u[g.Index(7, 3)] = math.NaN(), math.NaN()
	z, _ = g.RelativeVorticity(u, v)
	if !math.IsNaN(z[g.Index(6, 3)]) {
		t.Errorf("zeta between two missing rows = %g, want NaN", z[g.Index(6, 3)])
	}
	// Rows at the poles are NaN.
	p := mustRegular(t, -90, 5, 37, 0, 5, 72)
	u = field(p, func(lat, _ float64) float64 { return U * math.Cos(lat*deg2rad) })
	z, _ = p.RelativeVorticity(u, make([]float64, p.Len()))
	if !math.IsNaN(z[0]) || !math.IsNaN(z[p.Len()-1]) || math.IsNaN(z[p.Index(1, 0)]) {
		t.Errorf("pole rows: %g, %g; next row %g", z[0], z[p.Len()-1], z[p.Index(1, 0)])
	}
	if _, err := g.RelativeVorticity(u[:5], v); err == nil {
		t.Error("short field accepted")
	}
}

// TestVorticityAgainstNumpy compares RelativeVorticity on a seeded random
// smooth wind with an independent numpy computation using numpy.gradient
// (second-order centred inside, first-order one-sided at the edges, as
// here), on a regional grid (no wrap) and on a global grid (wrapped by
// padding one column on each side before numpy.gradient).
func TestVorticityAgainstNumpy(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	grids := []*Grid{
		mustRegular(t, 50, -0.75, 40, 120, 0.75, 60),
		mustRegular(t, -88, 4, 45, 2, 4, 90),
	}
	var in strings.Builder
	var want [][]float64
	for _, g := range grids {
		// A sum of a few random waves.
		type wave struct{ a, m, n, ph float64 }
		var ws [2][4]wave
		for c := range ws {
			for w := range ws[c] {
				ws[c][w] = wave{rng.Float64() * 20, float64(rng.IntN(5)), float64(rng.IntN(4)), rng.Float64() * 6}
			}
		}
		comp := func(c int) []float64 {
			return field(g, func(lat, lon float64) float64 {
				var s float64
				for _, w := range ws[c] {
					s += w.a * math.Cos(w.m*lon*deg2rad+w.ph) * math.Sin(w.n*lat*deg2rad+w.ph)
				}
				return s
			})
		}
		u, v := comp(0), comp(1)
		z, _ := g.RelativeVorticity(u, v)
		want = append(want, z)
		per := 0
		if g.Periodic() {
			per = 1
		}
		fmt.Fprintf(&in, "%d %d %d\n", g.NLat(), g.NLon(), per)
		for _, arr := range [][]float64{g.Lat, g.Lon, u, v} {
			for _, x := range arr {
				fmt.Fprintf(&in, "%.17g ", x)
			}
			in.WriteString("\n")
		}
	}
	script := `
import sys, numpy as np
d = sys.stdin.read().split()
pos = 0
R = 6371008.7714
while pos < len(d):
    ny, nx, per = int(d[pos]), int(d[pos+1]), d[pos+2] == "1"; pos += 3
    lat = np.array(d[pos:pos+ny], dtype=float); pos += ny
    lon = np.array(d[pos:pos+nx], dtype=float); pos += nx
    u = np.array(d[pos:pos+ny*nx], dtype=float).reshape(ny, nx); pos += ny*nx
    v = np.array(d[pos:pos+ny*nx], dtype=float).reshape(ny, nx); pos += ny*nx
    phi, lam = np.radians(lat), np.radians(lon)
    if per:
        dl = lam[1] - lam[0]
        vp = np.concatenate([v[:, -1:], v, v[:, :1]], axis=1)
        lp = np.concatenate([[lam[0] - dl], lam, [lam[-1] + dl]])
        dvdl = np.gradient(vp, lp, axis=1)[:, 1:-1]
    else:
        dvdl = np.gradient(v, lam, axis=1)
    ducdp = np.gradient(u * np.cos(phi)[:, None], phi, axis=0)
    z = (dvdl - ducdp) / (R * np.cos(phi)[:, None])
    print(" ".join(repr(float(x)) for x in z.ravel()))
`
	lines := strings.Split(strings.TrimSpace(string(runPython(t, "numpy", script, []byte(in.String())))), "\n")
	if len(lines) != len(grids) {
		t.Fatalf("python returned %d fields", len(lines))
	}
	for n, g := range grids {
		f := strings.Fields(lines[n])
		if len(f) != g.Len() {
			t.Fatalf("python field has %d values, want %d", len(f), g.Len())
		}
		var scale float64
		for _, x := range want[n] {
			scale = math.Max(scale, math.Abs(x))
		}
		for k, s := range f {
			ref, _ := strconv.ParseFloat(s, 64)
			if math.Abs(want[n][k]-ref) > 1e-10*scale {
				i, j := g.RowCol(k)
				t.Fatalf("%s at (%g, %g): zeta %.15g, numpy %.15g", g, g.Lat[i], g.Lon[j], want[n][k], ref)
			}
		}
	}
}

func TestVorticityRankineVortex(t *testing.T) {
	// A Rankine vortex centred on the equator at the date line, on a
	// regional 0.05-degree grid written in -180..180: solid-body rotation
	// V = Vmax r/Rmax inside Rmax, V = Vmax Rmax/r outside, counterclockwise.
	// Its vorticity is 2 Vmax/Rmax inside the core and 0 outside (derived,
	// planar). The wind is built in the local plane x = R (lon - 180),
	// y = R lat (radians); within 1 degree of the equator the sphere's
	// metric terms change the core value by less than 0.1% (derived:
	// 1 - phi tan(phi) at 1 degree is 0.9997).
	const vmax, rmax = 50.0, 60e3
	lon := make([]float64, 41)
	for j := range lon {
		lon[j] = NormalizeLon180(179 + 0.05*float64(j))
	}
	lat := make([]float64, 41)
	for i := range lat {
		lat[i] = -1 + 0.05*float64(i)
	}
	g := mustGrid(t, lat, lon)
	u := make([]float64, g.Len())
	v := make([]float64, g.Len())
	rr := make([]float64, g.Len())
	for i, la := range g.Lat {
		for j, lo := range g.Lon {
			x := EarthRadius * LonDiff(180, lo) * deg2rad
			y := EarthRadius * la * deg2rad
			r := math.Hypot(x, y)
			k := g.Index(i, j)
			rr[k] = r
			if r == 0 {
				continue
			}
			V := vmax * r / rmax
			if r > rmax {
				V = vmax * rmax / r
			}
			u[k], v[k] = -V*y/r, V*x/r
		}
	}
	z, err := g.RelativeVorticity(u, v)
	if err != nil {
		t.Fatal(err)
	}
	core := 2 * vmax / rmax
	step := EarthRadius * 0.05 * deg2rad
	var inside, outside int
	for k, r := range rr {
		i, j := g.RowCol(k)
		if i == 0 || j == 0 || i == g.NLat()-1 || j == g.NLon()-1 {
			continue // one-sided edges
		}
		switch {
		case r < rmax-2*step:
			inside++
			if math.Abs(z[k]-core) > 1e-3*core {
				t.Fatalf("core point r=%.0f m: zeta %g, want %g", r, z[k], core)
			}
		case r > rmax+2*step:
			outside++
			// Centred differences of 1/r decay: error ~ (step/r)^2 of the
			// shear Vmax Rmax / r^2 (derived), well under 2% of the core.
			if math.Abs(z[k]) > 0.02*core {
				t.Fatalf("outer point r=%.0f m: zeta %g, want about 0", r, z[k])
			}
		}
	}
	if inside < 50 || outside < 500 {
		t.Errorf("only %d core and %d outer points checked", inside, outside)
	}
}
