package catalog

import (
	"math"
	"strings"

	"github.com/squall-climate/squall/stages/ncio"
)

// fillDouble is netCDF's default fill for doubles (NC_FILL_DOUBLE),
// written explicitly as _FillValue so readers mask it.
const fillDouble = 9.969209968386869e36

// TrackFile describes tracks.nc beyond the events themselves.
type TrackFile struct {
	TimeUnits  string // "hours since <first time>", from the Clock
	Calendar   string
	Title      string
	Provenance ncio.Provenance
}

// WriteTracks writes the catalog as CF discrete sampling geometry
// trajectories in a contiguous ragged array (CF-1.13 section 9.3.3):
// featureType = "trajectory"; dimension "event" (one per event) and "obs"
// (every track point, events one after the other); event_id with cf_role
// = "trajectory_id"; row_size with sample_dimension = "obs"; per-point
// variables with coordinates = "time lat lon". An empty catalog has
// unlimited dimensions of length 0.
func (c *Catalog) WriteTracks(path string, tf TrackFile) error {
	var evs []*Event
	var memberIdx []int32
	var members []string
	for gi, g := range c.Groups {
		members = append(members, g.Member)
		for _, e := range g.Events {
			evs = append(evs, e)
			memberIdx = append(memberIdx, int32(gi))
		}
	}
	nObs := 0
	for _, e := range evs {
		nObs += len(e.Points)
	}
	w, err := ncio.Create(path)
	if err != nil {
		return err
	}
	if len(evs) > 0 {
		w.DefDim("event", len(evs))
		w.DefDim("obs", nObs)
	} else {
		w.DefUnlimitedDim("event")
		w.DefUnlimitedDim("obs")
	}
	ev := []string{"event"}
	ob := []string{"obs"}
	a := func(n string, v any) ncio.Attr { return ncio.Attr{Name: n, Value: v} }
	dbl := func(name string, dims []string, attrs ...ncio.Attr) {
		w.DefVar(ncio.VarSpec{Name: name, Type: ncio.Double, Dims: dims, Fill: fillDouble, Attrs: attrs})
	}
	coords := a("coordinates", "time lat lon")
	w.DefVar(ncio.VarSpec{Name: "event_id", Type: ncio.Int, Dims: ev, Attrs: []ncio.Attr{
		a("cf_role", "trajectory_id"), a("long_name", "event id, as in events.csv")}})
	w.DefVar(ncio.VarSpec{Name: "row_size", Type: ncio.Int, Dims: ev, Attrs: []ncio.Attr{
		a("long_name", "number of track points of each event"), a("sample_dimension", "obs")}})
	w.DefVar(ncio.VarSpec{Name: "event_class", Type: ncio.Byte, Dims: ev, Attrs: []ncio.Attr{
		a("long_name", "event class"), a("flag_values", []int8{TropicalCyclone, AtmosphericRiver}),
		a("flag_meanings", ClassNames[TropicalCyclone]+" "+ClassNames[AtmosphericRiver])}})
	w.DefVar(ncio.VarSpec{Name: "member_index", Type: ncio.Int, Dims: ev, Attrs: []ncio.Attr{
		a("long_name", "index (from 0) into the global attribute members, semicolon-separated sweep members")}})
	dbl("event_area_max", ev, a("long_name", "maximum area of the event over its steps"), a("units", "km2"))
	dbl("event_slp_min", ev, a("long_name", "minimum sea-level pressure inside the event"), a("units", "Pa"))
	dbl("event_wind_speed_max", ev, a("long_name", "maximum 10 m wind speed inside the event (model grid-box value, not a 1-minute sustained wind)"), a("units", "m s-1"))
	w.DefVar(ncio.VarSpec{Name: "saffir_simpson_category", Type: ncio.Byte, Dims: ev, Fill: int8(-1), Attrs: []ncio.Attr{
		a("long_name", "Saffir-Simpson category (NHC 2012) of event_wind_speed_max, 0 below hurricane strength; a label for comparing model runs, not a damage statement"),
		a("valid_range", []int8{0, 5})}})
	dbl("event_ivt_max", ev, a("long_name", "maximum integrated vapour transport inside the event"), a("units", "kg m-1 s-1"))
	dbl("event_ivt_mean", ev, a("long_name", "area-weighted mean integrated vapour transport over the event's cells and steps"), a("units", "kg m-1 s-1"))
	dbl("event_iwv_max", ev, a("long_name", "maximum integrated water vapour inside the event"), a("units", "kg m-2"))
	dbl("landfall_time", ev, a("long_name", "first time the event touches land"), a("units", tf.TimeUnits), a("calendar", tf.Calendar))
	dbl("landfall_lat", ev, a("long_name", "latitude of the land cell touched first"), a("units", "degrees_north"))
	dbl("landfall_lon", ev, a("long_name", "longitude of the land cell touched first"), a("units", "degrees_east"))
	w.DefVar(ncio.VarSpec{Name: "split_from", Type: ncio.Int, Dims: ev, Attrs: []ncio.Attr{a("long_name", "event_id this event split from, 0 for none")}})
	w.DefVar(ncio.VarSpec{Name: "merged_into", Type: ncio.Int, Dims: ev, Attrs: []ncio.Attr{a("long_name", "event_id this event merged into, 0 for none")}})

	dbl("time", ob, a("standard_name", "time"), a("long_name", "time"), a("units", tf.TimeUnits), a("calendar", tf.Calendar), a("axis", "T"))
	dbl("lat", ob, a("standard_name", "latitude"), a("long_name", "area-weighted centroid latitude"), a("units", "degrees_north"), a("axis", "Y"))
	dbl("lon", ob, a("standard_name", "longitude"), a("long_name", "area-weighted centroid longitude"), a("units", "degrees_east"), a("axis", "X"))
	dbl("area", ob, a("long_name", "area of the event at this step"), a("units", "km2"), coords)
	dbl("slp_min", ob, a("standard_name", "air_pressure_at_mean_sea_level"), a("long_name", "minimum sea-level pressure inside the event"), a("units", "Pa"), a("cell_methods", "area: minimum"), coords)
	dbl("wind_speed_max", ob, a("standard_name", "wind_speed"), a("long_name", "maximum 10 m wind speed inside the event"), a("units", "m s-1"), a("cell_methods", "area: maximum"), coords)
	dbl("ivt_max", ob, a("long_name", "maximum integrated vapour transport inside the event"), a("units", "kg m-1 s-1"), coords)
	dbl("ivt_mean", ob, a("long_name", "area-weighted mean integrated vapour transport inside the event"), a("units", "kg m-1 s-1"), coords)
	dbl("iwv_max", ob, a("standard_name", "atmosphere_mass_content_of_water_vapor"), a("long_name", "maximum integrated water vapour inside the event"), a("units", "kg m-2"), a("cell_methods", "area: maximum"), coords)
	w.DefVar(ncio.VarSpec{Name: "on_land", Type: ncio.Byte, Dims: ob, Attrs: []ncio.Attr{
		a("long_name", "the event touches land at this step"), a("flag_values", []int8{0, 1}), a("flag_meanings", "sea land"), coords}})

	w.PutConventions(tf.Title, tf.Provenance)
	w.PutGlobalAttr("featureType", "trajectory")
	w.PutGlobalAttr("members", strings.Join(members, ";"))
	w.PutGlobalAttr("comment", "Detected events from model output: research results, not forecasts or warnings.")
	if err := w.EndDef(); err != nil {
		w.Abort()
		return err
	}
	if len(evs) > 0 {
		var ids, rows, split, merged []int32
		var cls, cat []int8
		var amax, smin, wmax, imax, imean, iwmax, lft, lfa, lfo []float64
		var t, la, lo, ar, ps, ws, iv, ivm, iw []float64
		var land []int8
		fd := func(x float64) float64 {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return fillDouble
			}
			return x
		}
		for _, e := range evs {
			ids = append(ids, int32(e.ID))
			rows = append(rows, int32(len(e.Points)))
			split = append(split, int32(e.SplitFrom))
			merged = append(merged, int32(e.MergedInto))
			cls = append(cls, int8(e.Class))
			c := int8(-1)
			if e.Class == TropicalCyclone && !math.IsNaN(e.MaxWind) {
				c = int8(e.Category())
			}
			cat = append(cat, c)
			amax = append(amax, e.MaxAreaKm2)
			smin = append(smin, fd(e.MinSLP))
			wmax = append(wmax, fd(e.MaxWind))
			imax = append(imax, fd(e.MaxIVT))
			imean = append(imean, fd(e.MeanIVT))
			iwmax = append(iwmax, fd(e.MaxIWV))
			if e.Landfall != nil {
				lft = append(lft, e.Landfall.Time.Hours)
				lfa = append(lfa, e.Landfall.Lat)
				lfo = append(lfo, e.Landfall.Lon)
			} else {
				lft, lfa, lfo = append(lft, fillDouble), append(lfa, fillDouble), append(lfo, fillDouble)
			}
			for _, p := range e.Points {
				t = append(t, p.Time.Hours)
				la = append(la, p.Lat)
				lo = append(lo, p.Lon)
				ar = append(ar, p.AreaKm2)
				ps = append(ps, fd(p.MinSLP))
				ws = append(ws, fd(p.MaxWind))
				iv = append(iv, fd(p.MaxIVT))
				ivm = append(ivm, fd(p.MeanIVT))
				iw = append(iw, fd(p.MaxIWV))
				var l int8
				if p.OnLand {
					l = 1
				}
				land = append(land, l)
			}
		}
		writes := []error{
			w.WriteInt32("event_id", nil, nil, ids), w.WriteInt32("row_size", nil, nil, rows),
			w.WriteInt8("event_class", nil, nil, cls), w.WriteInt32("member_index", nil, nil, memberIdx),
			w.WriteFloat64("event_area_max", nil, nil, amax), w.WriteFloat64("event_slp_min", nil, nil, smin),
			w.WriteFloat64("event_wind_speed_max", nil, nil, wmax), w.WriteInt8("saffir_simpson_category", nil, nil, cat),
			w.WriteFloat64("event_ivt_max", nil, nil, imax), w.WriteFloat64("event_ivt_mean", nil, nil, imean),
			w.WriteFloat64("event_iwv_max", nil, nil, iwmax), w.WriteFloat64("landfall_time", nil, nil, lft),
			w.WriteFloat64("landfall_lat", nil, nil, lfa), w.WriteFloat64("landfall_lon", nil, nil, lfo),
			w.WriteInt32("split_from", nil, nil, split), w.WriteInt32("merged_into", nil, nil, merged),
			w.WriteFloat64("time", nil, nil, t), w.WriteFloat64("lat", nil, nil, la), w.WriteFloat64("lon", nil, nil, lo),
			w.WriteFloat64("area", nil, nil, ar), w.WriteFloat64("slp_min", nil, nil, ps),
			w.WriteFloat64("wind_speed_max", nil, nil, ws), w.WriteFloat64("ivt_max", nil, nil, iv),
			w.WriteFloat64("ivt_mean", nil, nil, ivm), w.WriteFloat64("iwv_max", nil, nil, iw),
			w.WriteInt8("on_land", nil, nil, land),
		}
		for _, err := range writes {
			if err != nil {
				w.Abort()
				return err
			}
		}
	}
	return w.Close()
}
