package label

import (
	"fmt"
	"math"
	"os"
	"os/exec"
	"strconv"
	"strings"
	"testing"
)

// Relative tolerance for a trapezoid sum compared with another
// implementation of the same rule: only rounding differs.
const tolTrapezoid = 1e-12

func TestColumnIntegralConstant(t *testing.T) {
	// Derived check (reference-values.md, "Atmospheric rivers"): q = 0.01
	// kg/kg, wind 10 m/s, 1000-300 hPa, g = 9.80665 gives IVT 713.8013
	// kg m-1 s-1 and IWV 71.38013 kg m-2.
	const wantIVT, wantIWV, tol = 713.8013, 71.38013, 1e-4
	p := []float64{100000, 92500, 85000, 70000, 50000, 30000}
	q := make([][]float64, len(p))
	u := make([][]float64, len(p))
	v := make([][]float64, len(p))
	qq := make([]float64, len(p))
	for k := range p {
		q[k] = []float64{0.01}
		u[k] = []float64{10}
		v[k] = []float64{0}
		qq[k] = 0.01
	}
	ivt := IVTFromLevels(p, q, u, v, 30000)
	if math.Abs(ivt[0]-wantIVT) > tol {
		t.Errorf("IVT = %.7f, want %.7f", ivt[0], wantIVT)
	}
	// The same wind split between u and v gives the same magnitude.
	for k := range p {
		u[k][0], v[k][0] = 6, 8
	}
	if ivt := IVTFromLevels(p, q, u, v, 30000); math.Abs(ivt[0]-wantIVT) > tol {
		t.Errorf("IVT(u=6, v=8) = %.7f, want %.7f", ivt[0], wantIVT)
	}
	if iwv := ColumnIntegral(p, qq, 30000); math.Abs(iwv-wantIWV) > tol/10 {
		t.Errorf("IWV = %.8f, want %.8f", iwv, wantIWV)
	}
	// Levels above the top are ignored; a top between levels cuts the
	// column there: 1000-300 hPa again with an extra 200 hPa level.
	p2 := append(append([]float64(nil), p...), 20000)
	q2 := append(append([]float64(nil), qq...), 0.01)
	if iwv := ColumnIntegral(p2, q2, 30000); math.Abs(iwv-wantIWV) > tol/10 {
		t.Errorf("IWV with a level above the top = %.8f, want %.8f", iwv, wantIWV)
	}
	// Top at 400 hPa between 500 and 300: 600 hPa of column, derived
	// 0.01*60000/9.80665.
	if iwv, want := ColumnIntegral(p, qq, 40000), 0.01*60000/G0; math.Abs(iwv-want) > 1e-9 {
		t.Errorf("IWV to 400 hPa = %.9f, want %.9f (derived)", iwv, want)
	}
	// Below-ground levels (NaN) are skipped: from 850 hPa up the column is
	// 550 hPa, derived 0.01*55000/9.80665.
	qs := append([]float64(nil), qq...)
	qs[0], qs[1] = math.NaN(), math.NaN()
	if iwv, want := ColumnIntegral(p, qs, 30000), 0.01*55000/G0; math.Abs(iwv-want) > 1e-9 {
		t.Errorf("IWV above 850 hPa = %.9f, want %.9f (derived)", iwv, want)
	}
	if x := ColumnIntegral([]float64{85000}, []float64{0.01}, 30000); !math.IsNaN(x) {
		t.Errorf("one level integrates to %g, want NaN", x)
	}
}

// realisticProfile is a tropical-maritime-like column: q 18 g/kg at the
// surface decaying with a 250 hPa pressure scale, wind turning and growing
// with height. Only the shape matters; the reference is the computation.
func realisticProfile() (p, q, u, v []float64) {
	p = []float64{100000, 92500, 85000, 70000, 60000, 50000, 40000, 30000}
	for _, pk := range p {
		q = append(q, 0.018*math.Exp(-(100000-pk)/25000))
		u = append(u, 5+25*(100000-pk)/70000)
		v = append(v, -3+12*(100000-pk)/70000)
	}
	return
}

// TestIVTAgainstScipy compares with scipy.integrate.trapezoid from Debian's
// python3-scipy run as /usr/bin/python3 (an independent implementation of
// the trapezoid rule).
func TestIVTAgainstScipy(t *testing.T) {
	const py = "/usr/bin/python3"
	if _, err := os.Stat(py); err != nil {
		t.Skip("reference /usr/bin/python3 missing (install Debian python3-scipy)")
	}
	p, q, u, v := realisticProfile()
	list := func(xs []float64) string {
		s := make([]string, len(xs))
		for i, x := range xs {
			s[i] = strconv.FormatFloat(x, 'g', 17, 64)
		}
		return "[" + strings.Join(s, ",") + "]"
	}
	script := fmt.Sprintf(`
import numpy as np
from scipy.integrate import trapezoid
p=np.array(%s)[::-1]; q=np.array(%s)[::-1]; u=np.array(%s)[::-1]; v=np.array(%s)[::-1]
g=9.80665
iu=trapezoid(q*u,p)/g; iv=trapezoid(q*v,p)/g
print(repr(float(np.hypot(iu,iv))), repr(float(trapezoid(q,p)/g)))
`, list(p), list(q), list(u), list(v))
	out, err := exec.Command(py, "-c", script).CombinedOutput()
	if err != nil {
		t.Skipf("reference scipy unavailable (%v: %s); install Debian python3-scipy", err, out)
	}
	f := strings.Fields(string(out))
	wantIVT, _ := strconv.ParseFloat(f[0], 64)
	wantIWV, _ := strconv.ParseFloat(f[1], 64)
	col := func(x []float64) [][]float64 {
		r := make([][]float64, len(x))
		for i := range x {
			r[i] = []float64{x[i]}
		}
		return r
	}
	got := IVTFromLevels(p, col(q), col(u), col(v), 30000)[0]
	if math.Abs(got-wantIVT) > tolTrapezoid*wantIVT {
		t.Errorf("IVT = %.12g, scipy trapezoid %.12g", got, wantIVT)
	}
	if iwv := ColumnIntegral(p, q, 30000); math.Abs(iwv-wantIWV) > tolTrapezoid*wantIWV {
		t.Errorf("IWV = %.12g, scipy trapezoid %.12g", iwv, wantIWV)
	}
	t.Logf("realistic profile: IVT %.4f kg m-1 s-1, IWV %.4f kg m-2 (scipy agrees)", got, iwv(p, q))
}

func iwv(p, q []float64) float64 { return ColumnIntegral(p, q, 30000) }
