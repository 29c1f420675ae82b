package catalog

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
)

// wrap180 maps a longitude in degrees to [-180, 180).
func wrap180(lon float64) float64 {
	x := math.Mod(lon+180, 360)
	if x < 0 {
		x += 360
	}
	return x - 180
}

// SplitAntimeridian turns a track of (lon, lat) points in degrees into the
// parts RFC 7946 section 3.1.9 asks for: longitudes in [-180, 180] and the
// line cut at the antimeridian so that no part crosses it. Consecutive
// points are joined the short way round (a step never spans more than 180
// degrees of longitude); where a step crosses 180, the latitude at the
// crossing is interpolated linearly in longitude, which is what a GeoJSON
// reader draws between two positions anyway. Each part has at least one
// position; a part of one position appears only for a one-point track.
func SplitAntimeridian(lons, lats []float64) [][][2]float64 {
	if len(lons) == 0 {
		return nil
	}
	// Unwrap the track into a continuous longitude u; the "sheet" of a
	// point is floor((u+180)/360) and positions are written as u - 360*sheet.
	sheet := func(u float64) float64 { return math.Floor((u + 180) / 360) }
	u0 := wrap180(lons[0])
	k := sheet(u0)
	var parts [][][2]float64
	cur := [][2]float64{{u0 - 360*k, lats[0]}}
	for i := 1; i < len(lons); i++ {
		d := wrap180(lons[i]) - wrap180(lons[i-1])
		if d >= 180 {
			d -= 360
		} else if d < -180 {
			d += 360
		}
		u1 := u0 + d
		y0, y1 := lats[i-1], lats[i]
		if k1 := sheet(u1); k1 != k {
			// One step spans at most 180 degrees, so it crosses at most
			// one boundary: east at 180+360k, west at -180+360k.
			edge := 180.0
			if k1 < k {
				edge = -180
			}
			f := (edge + 360*k - u0) / d
			yc := y0 + f*(y1-y0)
			cur = appendDistinct(cur, [2]float64{edge, yc})
			if len(cur) >= 2 {
				parts = append(parts, cur)
			}
			cur = [][2]float64{{-edge, yc}}
			k = k1
		}
		cur = appendDistinct(cur, [2]float64{u1 - 360*k, y1})
		u0 = u1
	}
	if len(cur) >= 2 || len(parts) == 0 {
		parts = append(parts, cur)
	}
	return parts
}

func appendDistinct(line [][2]float64, p [2]float64) [][2]float64 {
	if n := len(line); n > 0 && line[n-1] == p {
		return line
	}
	return append(line, p)
}

// geometry builds the RFC 7946 geometry of a track: a Point for one
// position, a LineString when the track does not cross the antimeridian,
// a MultiLineString of its parts when it does.
func geometry(lons, lats []float64) map[string]any {
	parts := SplitAntimeridian(lons, lats)
	switch {
	case len(parts) == 1 && len(parts[0]) == 1:
		return map[string]any{"type": "Point", "coordinates": parts[0][0]}
	case len(parts) == 1:
		return map[string]any{"type": "LineString", "coordinates": parts[0]}
	}
	return map[string]any{"type": "MultiLineString", "coordinates": parts}
}

// Feature is one GeoJSON feature: a track and its properties. Property
// values that are NaN floats are written as null.
type Feature struct {
	Lons, Lats []float64
	Properties map[string]any
}

// WriteGeoJSON writes a FeatureCollection to path. Keys come out sorted
// (encoding/json sorts map keys), so the file is deterministic.
func WriteGeoJSON(path string, feats []Feature) error {
	type feature struct {
		Type       string         `json:"type"`
		Geometry   map[string]any `json:"geometry"`
		Properties map[string]any `json:"properties"`
	}
	type collection struct {
		Type     string    `json:"type"`
		Features []feature `json:"features"`
	}
	c := collection{Type: "FeatureCollection", Features: []feature{}}
	for _, f := range feats {
		props := map[string]any{}
		for k, v := range f.Properties {
			if x, ok := v.(float64); ok && (math.IsNaN(x) || math.IsInf(x, 0)) {
				v = nil
			}
			props[k] = v
		}
		c.Features = append(c.Features, feature{Type: "Feature", Geometry: geometry(f.Lons, f.Lats), Properties: props})
	}
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(c); err != nil {
		return fmt.Errorf("encode %s: %w", path, err)
	}
	return os.WriteFile(path, buf.Bytes(), 0o644)
}
