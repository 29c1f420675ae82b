package catalog

import (
	"math"
	"reflect"
	"testing"
)

func TestSplitAntimeridian(t *testing.T) {
	// Expected parts are derived by hand: straight lines in (lon, lat) as
	// GeoJSON draws them, cut at +-180 (RFC 7946 section 3.1.9; its own
	// example cuts [170,45]-[-170,45] into [170,45],[180,45] and
	// [-180,45],[-170,45]).
	cases := []struct {
		name       string
		lons, lats []float64
		want       [][][2]float64
	}{
		{"RFC 7946 example", []float64{170, -170}, []float64{45, 45},
			[][][2]float64{{{170, 45}, {180, 45}}, {{-180, 45}, {-170, 45}}}},
		{"0..360 longitudes eastwards", []float64{175, 185, 195}, []float64{10, 20, 30},
			[][][2]float64{{{175, 10}, {180, 15}}, {{-180, 15}, {-175, 20}, {-165, 30}}}},
		{"westwards", []float64{-175, 175}, []float64{0, 10},
			[][][2]float64{{{-175, 0}, {-180, 5}}, {{180, 5}, {175, 10}}}},
		{"no crossing, over Greenwich", []float64{350, 10}, []float64{0, 0},
			[][][2]float64{{{-10, 0}, {10, 0}}}},
		{"point on the line", []float64{170, 180, 190}, []float64{0, 1, 2},
			[][][2]float64{{{170, 0}, {180, 1}}, {{-180, 1}, {-170, 2}}}},
		{"crosses twice", []float64{170, 190, 170}, []float64{0, 0, 0},
			[][][2]float64{{{170, 0}, {180, 0}}, {{-180, 0}, {-170, 0}, {-180, 0}}, {{180, 0}, {170, 0}}}},
		{"single point", []float64{200}, []float64{5},
			[][][2]float64{{{-160, 5}}}},
	}
	for _, c := range cases {
		got := SplitAntimeridian(c.lons, c.lats)
		if !reflect.DeepEqual(got, c.want) {
			t.Errorf("%s: got %v, want %v", c.name, got, c.want)
		}
		for _, part := range got {
			for _, p := range part {
				if p[0] < -180 || p[0] > 180 || math.IsNaN(p[0]) {
					t.Errorf("%s: longitude %g outside [-180, 180]", c.name, p[0])
				}
			}
		}
	}
}
