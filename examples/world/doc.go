// Package world generates climate-model-like output for an invented world,
// with tropical cyclones and atmospheric rivers planted at known places and
// times, and writes the truth beside the fields. It feeds squall's demo
// campaign, the end-to-end scoring of the detection stages, other
// packages' tests (preset "tiny") and performance work (preset "bench").
//
// # The world
//
// The Halcyon Basin is an ocean between the continent of Orvania to the
// west (with the Greyspine Range, up to 2.4 km) and Kessary to the
// north-east, with the Isle of Maren in the mid-latitudes and the five
// small Serrat Islands in the tropics. It lies between 40E and 140E, so no
// coordinate crosses the antimeridian; the default domain is 0-54N,
// 50-131E. Named regions (orvania_coast, serrat_sea, maren, kessary_shore,
// halcyon_basin) are written as an RFC 7946 GeoJSON file for the trend
// stage.
//
// The background is a zonal-mean atmosphere (temperature and moisture
// falling with latitude and height, a subtropical jet near 38N and 220 hPa,
// trades, a subtropical high) plus smooth random weather: sums of plane
// waves that drift east in mid-latitudes and west in the tropics and
// change shape over days, giving geostrophic eddy winds and sea-level
// pressure, temperature and moisture perturbations. Everything is a
// continuous function of latitude, longitude, pressure and time, so the
// "pressure" and "hybrid" vertical modes sample the same atmosphere and
// the same seed gives the same storms at any resolution or time step.
//
// Planted tropical cyclones follow the Holland (1980) profile (type
// Holland) for sea-level pressure and gradient wind, with a warm core
// peaking at 300 hPa, winds decaying with height, inflow near the ground
// and a moist core. Tracks are integrated hourly: west-north-west in the
// trades, recurving to the north-east; storms intensify to a peak and
// decay, faster over land (e-folding 15 h) and over cool water, and end
// inland or at the edge of the world. Planted atmospheric rivers are
// curved plumes 2200-4800 km long with a Gaussian cross-section (sigma
// 110-180 km) of warm moist air and a low-level jet along the axis,
// drifting north-east over 2-4 days.
//
// # Scenarios and trends
//
// Each Scenario sets the number of cyclones and rivers per season and
// their growth per year (Rate), a cyclone intensity factor and a river
// moisture factor with yearly trends, and a uniform warming (more aloft)
// that moistens everything through saturation. Strengths and times are
// drawn stratified, so the trend across years is the planted one rather
// than sampling noise. The demo's "warm" scenario has more and stronger
// cyclones and moister rivers than "control"; truth_summary.csv and
// truth_trends.csv give the realized numbers per year and their slopes.
//
// # Output files (under Options.Dir)
//
//	regions.geojson                 named regions (FeatureCollection of Polygons, property name)
//	truth_summary.csv               per scenario-year event counts, intensities, landfalls, per-region counts
//	truth_trends.csv                per scenario and quantity: planted and least-squares slope per year
//	<scenario>/fields_<year>.nc     CF-1.13 netCDF-4 fields of one season, noleap calendar
//	<scenario>/truth_<year>.nc      class masks in the shared mask.nc layout
//	<scenario>/truth_events.csv     one row per planted event that reached the truth
//	<scenario>/truth_tracks.csv     one row per event and time step
//
// A fields file holds psl, ps, prw (time, lat, lon), 10 m winds uas, vas
// (with the scalar coordinate height = 10 m), and ua, va, ta, hus on
// pressure levels plev (1000, 925, 850, 700, 500, 300, 200 hPa, in Pa) or
// on 16 hybrid sigma-pressure levels lev (formula_terms "a: a b: b p0: p0
// ps: ps"), plus the static land_area_fraction. Variables carry CF
// standard names and units; fields are float32 with _FillValue 1e20,
// deflate level 1 with shuffle, one time step per chunk. Pressure levels
// below the ground (mountains, deep cyclone cores) hold the profile
// continued downward unless Options.BelowSurface is "fill"; hybrid levels
// follow the terrain, so interpolating them to pressure levels meets
// levels below the ground over the Greyspine Range and in cyclone cores.
//
// The truth mask class_mask is 1 (tropical_cyclone) within the radius where
// a storm's planted symmetric 10 m wind reaches 34 kt (TCWindThreshold),
// capped at 500 km (TCMaxRadius); 2 (atmospheric_river) where a plume's
// weight is at least 0.05 and the 1000-300 hPa IVT of the written fields
// (trapezoid rule on the pressure levels, g = 9.80665) reaches 250 kg m-1
// s-1 (ARThreshold, the AMS Glossary boundary); a pixel meeting both is a
// cyclone pixel. Events with no truth pixel inside the season and domain
// are left out of the catalogs. The CSV columns are listed in
// writeEventsCSV and writeTracksCSV and in examples/README.md.
//
// # Determinism and costs
//
// Every random choice comes from a splitmix64 stream derived from the seed
// and the names of the scenario, year and event, so the same options give
// byte-identical files (the history attribute holds the options, never a
// date) and adding an event leaves the others unchanged. Compute is spread
// over Options.Workers goroutines by latitude row; all netCDF calls stay on
// the calling goroutine, one time step in memory at a time (plus one being
// computed). Raw field bytes are 4 x (5 + 4 x levels) x points per step;
// the demo preset writes about 387 MB, bench about 3.4 GB. Generation
// speed is reported by BenchmarkGenerate (MB/s of raw field bytes).
//
// The data are synthetic; detections and trends computed from them are
// research output, not warnings.
package world
