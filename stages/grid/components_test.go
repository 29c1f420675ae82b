package grid

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

// randomMask returns a seeded random mask with the given density.
func randomMask(rng *rand.Rand, n int, density float64) []bool {
	m := make([]bool, n)
	for k := range m {
		m[k] = rng.Float64() < density
	}
	return m
}

// samePartition checks that two labellings (0 = background) group the
// points identically: every label of a maps to exactly one label of b and
// back.
func samePartition(a, b []int32) error {
	if len(a) != len(b) {
		return fmt.Errorf("lengths %d and %d", len(a), len(b))
	}
	ab := map[int32]int32{}
	ba := map[int32]int32{}
	for k := range a {
		if (a[k] == 0) != (b[k] == 0) {
			return fmt.Errorf("point %d: background in one labelling only (%d vs %d)", k, a[k], b[k])
		}
		if a[k] == 0 {
			continue
		}
		if x, ok := ab[a[k]]; ok && x != b[k] {
			return fmt.Errorf("point %d: label %d is split between reference labels %d and %d", k, a[k], x, b[k])
		}
		if x, ok := ba[b[k]]; ok && x != a[k] {
			return fmt.Errorf("point %d: reference label %d is split between labels %d and %d", k, b[k], x, a[k])
		}
		ab[a[k]], ba[b[k]] = b[k], a[k]
	}
	return nil
}

// scipyScript labels masks read from stdin ("nlat nlon periodic" then the
// 0/1 values) with scipy.ndimage.label and a full 3x3 structure (8
// neighbours). scipy has no periodic boundary, so for periodic grids the
// script merges, with its own union-find over scipy's labels, every label
// in column nlon-1 with the labels of its three neighbours in column 0
// (rows i-1, i, i+1): exactly the pairs 8-connectivity adds across the seam.
const scipyScript = `
import sys, numpy as np
from scipy import ndimage
data = sys.stdin.read().split()
pos = 0
while pos < len(data):
    nlat, nlon, periodic = int(data[pos]), int(data[pos+1]), data[pos+2] == "1"
    pos += 3
    mask = np.array([c == "1" for c in data[pos:pos+nlat*nlon]]).reshape(nlat, nlon)
    pos += nlat * nlon
    lab, n = ndimage.label(mask, structure=np.ones((3, 3), dtype=int))
    if periodic:
        parent = list(range(n + 1))
        def find(x):
            while parent[x] != x:
                x = parent[x]
            return x
        for i in range(nlat):
            a = lab[i, nlon - 1]
            if a == 0:
                continue
            for di in (-1, 0, 1):
                if 0 <= i + di < nlat and lab[i + di, 0] != 0:
                    ra, rb = find(a), find(lab[i + di, 0])
                    if ra != rb:
                        parent[max(ra, rb)] = min(ra, rb)
        lab = np.vectorize(find)(lab) if n else lab
    print(" ".join(str(int(x)) for x in lab.ravel()))
`

func encodeMask(sb *strings.Builder, g *Grid, m []bool) {
	p := 0
	if g.Periodic() {
		p = 1
	}
	fmt.Fprintf(sb, "%d %d %d\n", g.NLat(), g.NLon(), p)
	for k, v := range m {
		if v {
			sb.WriteString("1")
		} else {
			sb.WriteString("0")
		}
		if (k+1)%g.NLon() == 0 {
			sb.WriteString("\n")
		} else {
			sb.WriteString(" ")
		}
	}
}

func TestComponentsAgainstScipy(t *testing.T) {
	rng := rand.New(rand.NewPCG(2024, 5))
	grids := []*Grid{
		mustRegular(t, 10, 1, 37, 100, 1, 53),                                 // regional
		mustRegular(t, 89, -2, 90, -179, 2, 180),                              // global, north-to-south
		mustGrid(t, []float64{0, 1, 2}, []float64{170, 175, 180, -175, -170}), // regional across the antimeridian: no wrap
		mustRegular(t, -60, 30, 5, 0, 120, 3),                                 // global with 3 columns: every column touches the seam
	}
	// The square-lattice site-percolation threshold is about 0.5927 with 4
	// neighbours and 1 - 0.5927 = 0.4073 with 8 (from memory): densities near
	// 0.4 give large tangled objects, the hard case for labelling.
	densities := []float64{0.05, 0.2, 0.4, 0.5927, 0.7, 0.95}
	type job struct {
		g *Grid
		m []bool
	}
	var jobs []job
	var in strings.Builder
	for _, g := range grids {
		for _, d := range densities {
			m := randomMask(rng, g.Len(), d)
			jobs = append(jobs, job{g, m})
			encodeMask(&in, g, m)
		}
	}
	lines := strings.Split(strings.TrimSpace(string(runPython(t, "numpy, scipy.ndimage", scipyScript, []byte(in.String())))), "\n")
	if len(lines) != len(jobs) {
		t.Fatalf("python returned %d labellings, want %d", len(lines), len(jobs))
	}
	for n, j := range jobs {
		f := strings.Fields(lines[n])
		ref := make([]int32, len(f))
		for k, s := range f {
			v, err := strconv.Atoi(s)
			if err != nil {
				t.Fatal(err)
			}
			ref[k] = int32(v)
		}
		lab, err := j.g.Components(j.m)
		if err != nil {
			t.Fatal(err)
		}
		if err := samePartition(lab.Labels, ref); err != nil {
			t.Errorf("%s, job %d: partition differs from scipy: %v", j.g, n, err)
		}
		checkLabelling(t, j.g, j.m, lab)
	}
}

// checkLabelling checks internal consistency: labels ordered by first
// pixel, pixel lists and counts agree, areas add up.
func checkLabelling(t *testing.T, g *Grid, mask []bool, lab *Labelling) {
	t.Helper()
	areas := g.CellAreas()
	var total, sum float64
	for k, v := range mask {
		if v {
			total += areas[k]
		}
	}
	prevFirst := -1
	seen := 0
	for c, comp := range lab.Components {
		if comp.Label != int32(c+1) || comp.First <= prevFirst {
			t.Fatalf("component %d: label %d first %d after %d", c, comp.Label, comp.First, prevFirst)
		}
		prevFirst = comp.First
		p := lab.Pixels(comp.Label)
		if len(p) != comp.Pixels || int(p[0]) != comp.First {
			t.Fatalf("component %d: %d pixels listed, %d counted", c, len(p), comp.Pixels)
		}
		for _, k := range p {
			if lab.Labels[k] != comp.Label {
				t.Fatalf("pixel %d listed in %d but labelled %d", k, comp.Label, lab.Labels[k])
			}
		}
		seen += len(p)
		sum += comp.Area
	}
	if math.Abs(sum-total) > 1e-9*total {
		t.Errorf("component areas sum to %g, mask area %g", sum, total)
	}
	n := 0
	for _, v := range mask {
		if v {
			n++
		}
	}
	if seen != n {
		t.Errorf("%d pixels in components, %d in mask", seen, n)
	}
}

func TestComponentsAcrossDateLine(t *testing.T) {
	// 1-degree global grid in -180..180: a 4x6 block spanning the date line
	// (columns 357..359 and 0..2) is one object on the periodic grid and two
	// on the same rows of a regional grid that stops at the date line.
	g := mustRegular(t, -89.5, 1, 180, -179.5, 1, 360)
	mask := make([]bool, g.Len())
	for i := 88; i < 92; i++ { // rows at -1.5, -0.5, 0.5, 1.5
		for _, j := range []int{357, 358, 359, 0, 1, 2} {
			mask[g.Index(i, j)] = true
		}
	}
	// A diagonal touch across the seam: (10, 359) and (11, 0).
	mask[g.Index(10, 359)] = true
	mask[g.Index(11, 0)] = true
	lab, err := g.Components(mask)
	if err != nil {
		t.Fatal(err)
	}
	if len(lab.Components) != 2 {
		t.Fatalf("periodic grid: %d components, want 2 (the block and the diagonal pair)", len(lab.Components))
	}
	diag, block := lab.Components[0], lab.Components[1]
	if diag.Pixels != 2 || block.Pixels != 24 {
		t.Fatalf("pixel counts %d, %d; want 2, 24", diag.Pixels, block.Pixels)
	}
	// The block is symmetric about (0, 180): its centroid lies there
	// (derived, symmetry) and its extent runs from -177.5 east to 177.5.
	if math.Abs(block.CentroidLat) > 1e-9 || math.Abs(math.Abs(block.CentroidLon)-180) > 1e-9 {
		t.Errorf("centroid %g, %g; want 0, 180", block.CentroidLat, block.CentroidLon)
	}
	if block.LonWest != 177.5 || block.LonEast != -177.5 || block.ColWest != 357 || block.ColEast != 2 || block.LonSpan != 5 {
		t.Errorf("extent %g..%g (cols %d..%d, span %g), want 177.5..-177.5 (357..2, 5)", block.LonWest, block.LonEast, block.ColWest, block.ColEast, block.LonSpan)
	}
	if block.LatMin != -1.5 || block.LatMax != 1.5 || block.RowMin != 88 || block.RowMax != 91 {
		t.Errorf("lat extent %g..%g rows %d..%d", block.LatMin, block.LatMax, block.RowMin, block.RowMax)
	}
	// Area: 6 columns x (sin 2 - sin(-2)) band of 1 degree cells (derived,
	// CF-1.13 7.2).
	want := CellArea(-2, 2, 0, 6)
	if math.Abs(block.Area-want) > 1e-6*want {
		t.Errorf("area %g, want %g", block.Area, want)
	}
	// Same mask on a grid that is not periodic (359 columns would not be
	// global; use all 360 but label with a regional copy of the grid).
	reg := *g
	reg.periodic = false
	lab2, err := reg.Components(mask)
	if err != nil {
		t.Fatal(err)
	}
	if len(lab2.Components) != 4 {
		t.Errorf("non-periodic: %d components, want 4 (each object cut in two)", len(lab2.Components))
	}
}

func TestComponentsWholeRow(t *testing.T) {
	// A full ring of latitude: every column occupied, one object, span 360.
	g := mustRegular(t, -87.5, 5, 36, 2.5, 10, 36)
	mask := make([]bool, g.Len())
	for j := range g.NLon() {
		mask[g.Index(30, j)] = true
	}
	lab, err := g.Components(mask)
	if err != nil {
		t.Fatal(err)
	}
	if len(lab.Components) != 1 || lab.Components[0].LonSpan != 360 || lab.Components[0].ColWest != 0 || lab.Components[0].ColEast != 35 {
		t.Errorf("ring: %+v", lab.Components)
	}
	if _, err := g.Components(mask[1:]); err == nil {
		t.Error("a mask of the wrong size was accepted")
	}
}

func TestEqual(t *testing.T) {
	got := Equal([]byte{0, 1, 2, 1}, 1)
	if fmt.Sprint(got) != "[false true false true]" {
		t.Errorf("Equal = %v", got)
	}
}

// BenchmarkComponents labels seeded random masks on a 0.25-degree global
// grid (1440x720) and reports pixels per second.
func BenchmarkComponents(b *testing.B) {
	g := mustRegular(b, -89.875, 0.25, 720, 0.125, 0.25, 1440)
	for _, d := range []float64{0.05, 0.3, 0.6} {
		mask := randomMask(rand.New(rand.NewPCG(1, uint64(d*100))), g.Len(), d)
		b.Run(fmt.Sprintf("density=%g", d), func(b *testing.B) {
			for b.Loop() {
				if _, err := g.Components(mask); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(g.Len())*float64(b.N)/b.Elapsed().Seconds()/1e6, "Mpixel/s")
		})
	}
}
