package pipeline

import (
	"encoding/json"
	"fmt"
	"os"
)

// readGeoJSONRegions reads named polygons from an RFC 7946 file.
func readGeoJSONRegions(path string) ([]Region, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("read regions: %w", err)
	}
	var fc struct {
		Type     string `json:"type"`
		Features []struct {
			Properties map[string]any `json:"properties"`
			Geometry   struct {
				Type        string          `json:"type"`
				Coordinates json.RawMessage `json:"coordinates"`
			} `json:"geometry"`
		} `json:"features"`
	}
	if err := json.Unmarshal(b, &fc); err != nil {
		return nil, fmt.Errorf("%s is not GeoJSON: %v", path, err)
	}
	if fc.Type != "FeatureCollection" {
		return nil, fmt.Errorf("%s: expected a FeatureCollection, got %q", path, fc.Type)
	}
	var out []Region
	for i, f := range fc.Features {
		name, _ := f.Properties["name"].(string)
		if name == "" || !nameRE.MatchString(name) || len(name) > 64 {
			return nil, fmt.Errorf("%s: feature %d needs a \"name\" property of a-z, 0-9, _ and -, at most 64 characters (got %q)", path, i, name)
		}
		r := Region{Name: name}
		switch f.Geometry.Type {
		case "Polygon":
			var p [][][2]float64
			if err := json.Unmarshal(f.Geometry.Coordinates, &p); err != nil {
				return nil, fmt.Errorf("%s: feature %q: %v", path, name, err)
			}
			r.Polygons = [][][][2]float64{p}
		case "MultiPolygon":
			if err := json.Unmarshal(f.Geometry.Coordinates, &r.Polygons); err != nil {
				return nil, fmt.Errorf("%s: feature %q: %v", path, name, err)
			}
		default:
			return nil, fmt.Errorf("%s: feature %q is a %s; regions must be Polygon or MultiPolygon", path, name, f.Geometry.Type)
		}
		out = append(out, r)
	}
	return out, nil
}
