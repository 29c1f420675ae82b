// Package catalog is the catalog stage kind: it turns class masks (the
// shared mask.nc format: 0 background, 1 tropical_cyclone, 2
// atmospheric_river) and the fields beside them (fields.nc) into a catalog
// of events with tracks, durations, areas, intensities, landfall and the
// regions they touch. Detections from model output are research results,
// not forecasts or warnings.
//
// # Events
//
// Per time step and class, objects are the 8-connected regions of the mask
// on the sphere (grid.Components: periodic in longitude on global grids,
// so an object crossing the date line is one object; never across a pole).
// Objects are linked through time per class by Linker:
//
//   - Two objects at consecutive steps are candidates when they share a
//     cell; pairs are taken greedily by decreasing overlap area, each object
//     used once, so an event has exactly one object per step.
//   - Split: an object left over at t that overlapped the previous step
//     starts a new event with split_from = the event it overlapped most.
//     Merge: an object left over at t-1 that overlaps the step after ends,
//     with merged_into = the event its partner joined. The larger overlap
//     keeps the identity.
//   - Objects that overlap nothing in the other step are linked by the
//     distance between their centroids, up to tc_link_km_per_6h or
//     ar_link_km_per_6h scaled by the time between steps (small cyclones
//     on coarse grids move more than their size in 6 hours).
//   - A gap in time (a step more than max_gap_factor times the usual step
//     after the previous) ends every event. Blocks (years) of a scenario
//     are read in order and linked across their boundary, so an event
//     crossing a year boundary stays whole; that is why the kind fans out
//     per scenario (FanScenario). Sweep members are cataloged separately
//     (one group each, ids numbered on across groups).
//
// Event ids are 1..N in order of first step, then class, then creation;
// they are unique within one output and stable for identical inputs.
//
// # Per event
//
// Track: the area-weighted centroid per step, the direction of the sum of
// cell-area-weighted 3-D unit vectors (right across the date line and near
// the poles), longitudes in [-180, 180]. Area: sum of CF cell areas
// (sphere of radius grid.EarthRadius) per step, and the maximum. Duration:
// end minus start in hours of the model calendar (0 for one step).
// Intensity, from fields.nc channels found by quantity (see FieldsFile):
// minimum SLP and maximum 10 m wind speed over the event's cells (all
// classes), the Saffir-Simpson category of the maximum wind for cyclones
// (NHC 2012 scale, half-open knot intervals, 1 kt = 1852/3600 m/s; caution:
// model winds on coarse grids are grid-box means at the output time step,
// not 1-minute sustained observed winds, and understate real peaks, so the
// category compares model runs and says nothing about damage); maximum
// and area-weighted mean IVT and maximum IWV for rivers (also given for
// cyclones when present). Landfall: the first step at which any cell of
// the event is land; its place is the land cell of that step's object
// nearest the object's centroid, with the regions containing it. Land
// comes from the setting land_mask (a netCDF file, with land_values for
// category masks or land_fraction_min for fractions), else from
// land_area_fraction in fields.nc, else in mask.nc; a land mask on
// another grid is regridded by nearest neighbour (the source cell holding
// each mask cell centre; a mask cell outside the land mask is an error)
// or refused (land_mask_regrid: refuse). Regions: every campaign region
// (box or GeoJSON polygons) containing the centre of any event cell.
//
// # Output files
//
// events.csv, one row per event:
//
//	event_id, scenario, member, class (tropical_cyclone|atmospheric_river),
//	start, end (ISO 8601 in the model calendar), duration_hours, steps,
//	start_lat, start_lon, end_lat, end_lon (degrees), max_area_km2,
//	min_slp_pa, max_wind_ms, saffir_simpson_category (0-5, cyclones only),
//	storm_stage (tropical_depression|tropical_storm|hurricane),
//	max_ivt_kg_m_s, mean_ivt_kg_m_s, max_iwv_kg_m2,
//	landfall (true|false), landfall_time, landfall_lat, landfall_lon,
//	landfall_regions, regions (semicolon-separated), split_from, merged_into
//
// track_points.csv, one row per event and step:
//
//	event_id, scenario, member, class, index (0..steps-1), time,
//	hours_since_start, lat, lon, area_km2, pixels, min_slp_pa, max_wind_ms,
//	max_ivt_kg_m_s, mean_ivt_kg_m_s, max_iwv_kg_m2, on_land
//
// Empty cells are missing or not applicable (read as NaN/NA by data-frame
// readers). events.geojson is an RFC 7946 FeatureCollection: one feature
// per event with the events.csv columns as properties, its track as a
// LineString (a Point for a one-step event), cut at the antimeridian into
// a MultiLineString as RFC 7946 section 3.1.9 asks. tracks.nc holds CF
// discrete sampling geometry trajectories in a contiguous ragged array
// (CF-1.13 section 9.3.3): featureType "trajectory", dimensions event and
// obs, event_id with cf_role trajectory_id, row_size with
// sample_dimension "obs", per-point time, lat, lon, area, slp_min,
// wind_speed_max, ivt_max, ivt_mean, iwv_max, on_land with coordinates
// "time lat lon", and per-event summaries; time is "hours since" the first
// step in the model calendar; history holds the kind, version and
// settings, never a date.
//
// # Costs
//
// One pass over the masks: component labelling and linking are linear in
// pixels per step (plus a sort of the few overlapping pairs); memory holds
// two label images, one step of fields and the events' track points. All
// netCDF I/O runs on the calling goroutine. BenchmarkCatalog reports
// pixels per second and the ratio to reading the masks alone.
package catalog
