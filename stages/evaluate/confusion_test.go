package evaluate

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// debianPython is Debian's interpreter, which has python3-sklearn,
// python3-numpy and python3-netcdf4; the python3 first on PATH does not.
const debianPython = "/usr/bin/python3"

// requirePython skips unless /usr/bin/python3 imports every module given.
func requirePython(t *testing.T, modules ...string) {
	t.Helper()
	if _, err := os.Stat(debianPython); err != nil {
		t.Skipf("reference check skipped: %s not found (install Debian python3 and %s)", debianPython, strings.Join(modules, ", "))
	}
	code := "import " + strings.Join(modules, ", ")
	if out, err := exec.Command(debianPython, "-c", code).CombinedOutput(); err != nil {
		t.Skipf("reference check skipped: %s cannot %q (install Debian python3-sklearn / python3-netcdf4): %s", debianPython, code, out)
	}
}

// TestConfusionAgainstSklearn compares the unweighted confusion matrix,
// per-class IoU, precision and recall exactly (integer counts and the same
// single division) with scikit-learn's confusion_matrix, jaccard_score and
// precision_recall_fscore_support, and the area-weighted matrix with
// confusion_matrix(sample_weight=...).
func TestConfusionAgainstSklearn(t *testing.T) {
	requirePython(t, "sklearn", "numpy")
	const (
		seed   = 20240607 // fixed seed
		nPixel = 4000
		K      = 3
		// F1 and mean IoU are formed by sklearn/numpy in another order of
		// operations; weighted sums in another summation order.
		relTol = 1e-13
	)
	rng := rand.New(rand.NewPCG(seed, 1))
	ref := make([]int, nPixel)
	cand := make([]int, nPixel)
	w := make([]float64, nPixel)
	m := NewConfusion(K)
	for i := range ref {
		// Skewed class frequencies, as in real masks (background dominates),
		// and a candidate that agrees most of the time.
		ref[i] = pick(rng)
		cand[i] = ref[i]
		if rng.Float64() < 0.3 {
			cand[i] = pick(rng)
		}
		w[i] = 100 + 1000*rng.Float64() // km2, like cell areas
		m.AddPixel(ref[i], cand[i], w[i])
	}
	dir := t.TempDir()
	in := filepath.Join(dir, "labels.json")
	b, _ := json.Marshal(map[string]any{"ref": ref, "cand": cand, "w": w})
	if err := os.WriteFile(in, b, 0o644); err != nil {
		t.Fatal(err)
	}
	script := `
import json, sys
import numpy as np
from sklearn.metrics import confusion_matrix, jaccard_score, precision_recall_fscore_support
d = json.load(open(sys.argv[1]))
y, p, w = np.array(d["ref"]), np.array(d["cand"]), np.array(d["w"])
labels = [0, 1, 2]
out = {
  "cm": confusion_matrix(y, p, labels=labels).tolist(),
  "cmw": confusion_matrix(y, p, labels=labels, sample_weight=w).tolist(),
  "iou": jaccard_score(y, p, labels=labels, average=None).tolist(),
  "miou": float(jaccard_score(y, p, labels=labels, average="macro")),
}
pr, rc, f1, _ = precision_recall_fscore_support(y, p, labels=labels, average=None)
out["precision"], out["recall"], out["f1"] = pr.tolist(), rc.tolist(), f1.tolist()
print(json.dumps(out))
`
	out, err := exec.Command(debianPython, "-c", script, in).Output()
	if err != nil {
		t.Fatalf("scikit-learn reference run failed: %v", err)
	}
	var want struct {
		CM                    [][]int64
		CMW                   [][]float64
		IoU                   []float64
		MIoU                  float64
		Precision, Recall, F1 []float64
	}
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatalf("decode sklearn output: %v\n%s", err, out)
	}
	for r := 0; r < K; r++ {
		for c := 0; c < K; c++ {
			if got := m.Count[r*K+c]; got != want.CM[r][c] {
				t.Errorf("count[%d][%d] = %d, sklearn %d", r, c, got, want.CM[r][c])
			}
			if got := m.Area[r*K+c]; !near(got, want.CMW[r][c], relTol) {
				t.Errorf("area[%d][%d] = %.17g, sklearn %.17g", r, c, got, want.CMW[r][c])
			}
		}
	}
	u := m.Weighted(false)
	for k := 0; k < K; k++ {
		s := PerClass(u, K, k)
		if s.IoU != want.IoU[k] || s.Precision != want.Precision[k] || s.Recall != want.Recall[k] {
			t.Errorf("class %d: IoU %.17g precision %.17g recall %.17g; sklearn %.17g %.17g %.17g",
				k, s.IoU, s.Precision, s.Recall, want.IoU[k], want.Precision[k], want.Recall[k])
		}
		if !near(s.F1, want.F1[k], relTol) {
			t.Errorf("class %d: F1 %.17g, sklearn %.17g", k, s.F1, want.F1[k])
		}
	}
	if got := MeanIoU(u, K); !near(got, want.MIoU, relTol) {
		t.Errorf("mean IoU %.17g, sklearn %.17g", got, want.MIoU)
	}
}

func pick(rng *rand.Rand) int {
	switch x := rng.Float64(); {
	case x < 0.8:
		return 0
	case x < 0.9:
		return 1
	}
	return 2
}

func near(a, b, rel float64) bool {
	if a == b {
		return true
	}
	return math.Abs(a-b) <= rel*math.Max(math.Abs(a), math.Abs(b))
}

func TestMeanIoUSkipsAbsentClass(t *testing.T) {
	// Class 2 absent from both masks: its IoU is undefined and the mean is
	// over classes 0 and 1 only (derived from the definition in doc.go).
	m := NewConfusion(3)
	m.AddPixel(0, 0, 1)
	m.AddPixel(1, 1, 1)
	m.AddPixel(1, 0, 1)
	u := m.Weighted(false)
	if !math.IsNaN(PerClass(u, 3, 2).IoU) {
		t.Fatalf("IoU of an absent class should be NaN")
	}
	want := (0.5 + 0.5) / 2 // class 0: 1/(1+1); class 1: 1/(1+1) (derived)
	if got := MeanIoU(u, 3); got != want {
		t.Errorf("mean IoU %g, want %g", got, want)
	}
}
