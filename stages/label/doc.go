// Package label is the "label" stage kind (register label.Kind{}): heuristic
// per-pixel class masks (0 background, 1 tropical_cyclone, 2
// atmospheric_river) from published threshold criteria, for every time
// step of a block, with the tropical-cyclone candidates and tracks beside
// them. The labels train the segmentation network and are the reference
// the evaluation compares with; they are research output, not warnings.
// Its sub-packages are two more kinds: climatology ("ivt-climatology",
// the per-cell monthly percentile for relative AR thresholds) and
// agreement ("agreement", label uncertainty across a threshold sweep).
//
// # Inputs (FanBlock: one scenario, block and member)
//
// fields.nc from a subset input (the shared layout: dims time, lat, lon; a
// regular latitude-longitude grid, anything else is refused; channels found
// by their quantity and level_pa attributes, never by name; units converted
// to SI with ncio). In relative AR mode also ivt_climatology.nc from an
// ivt-climatology input (broadcast to every block). What each criterion
// reads, and the error when it is absent, which names the criterion, what
// it needs, the channels present and a hint:
//
//	SLP minima          air_pressure_at_mean_sea_level
//	vorticity           relative_vorticity or atmosphere_upward_relative_vorticity at 850 hPa,
//	                    else eastward_wind and northward_wind at 850 hPa (vorticity computed by grid)
//	max_wind, TC mask   wind_speed without level, else eastward_wind and northward_wind without level (10 m)
//	warm_core           air_temperature at 850, 700, 500, 300 hPa
//	wind_profile        wind_speed (or u and v) at 850 and 300 hPa
//	AR                  ivt; else ivt_u and ivt_v; else specific_humidity, eastward_wind, northward_wind on
//	                    two or more levels up to ar_ivt_top (IVT integrated here, trapezoid in p, 1/g0);
//	                    else iwv (atmosphere_mass_content_of_water_vapor) with the IWV threshold
//
// # Tropical cyclones
//
// Per step (FindCandidates): SLP minima lowest in their box (grid.LocalMinima;
// the box is tc_box_points wide, widened on fine grids to tc_box_width) whose
// box is complete and free of missing values; then the criteria of
// Bengtsson et al. (1995) and Vitart et al. (1997): 850 hPa vorticity with
// the hemisphere's sign, 10 m wind (threshold scaled with grid spacing after
// Walsh et al. 2007; see WindThreshold for the interpolation), warm core
// (700+500+300 hPa anomaly sum against the box mean, 300 hPa anomaly above
// the 850 hPa one), mean 850 hPa wind above the 300 hPa one. Across steps
// (Stitch): greedy nearest-first matching within tc_max_speed times the
// hours elapsed, by great-circle distance, tc_max_gap_steps missed steps
// allowed; tracks shorter than tc_min_lifetime or born poleward of
// tc_genesis_max_lat are dropped. Mask (TCFootprint): around each point of
// a kept track, the pixels with 10 m wind >= tc_mask_wind (34 kt, the gale
// radius R34) connected to the storm's wind maximum, plus the disc out to
// the wind maximum (eye and eyewall), all within tc_mask_max_radius.
// Tracks are cut at the block boundary: a storm crossing the new year is
// judged in two pieces.
//
// # Atmospheric rivers
//
// Per step (DetectAR): pixels with IVT >= ar_ivt_min (250 kg m-1 s-1, AMS
// Glossary), or in relative mode >= max(climatology percentile of the cell
// and calendar month, ar_ivt_floor) (cells without a climatology use
// ar_ivt_min); 8-connected objects, across the date line on global grids
// (grid.Components); kept when the area-weighted centroid is at least
// ar_min_centroid_lat from the equator, the length (largest great-circle
// distance between pixel centres, grid.Shape) is at least ar_min_length,
// the width (area/length) at most ar_max_width and length/width at least
// ar_min_aspect. Settings docs say which defaults are confirmed and which
// are from memory.
//
// Overlap: where a pixel is both, overlap decides (default
// tropical_cyclone: the TC footprint is small and specific, a river often
// wraps into a cyclone's moist core). AR objects are judged on their full
// extent before TC pixels are painted over them.
//
// # Label uncertainty
//
// Settings marked Sweep (tc_vorticity_min, tc_wind_min, tc_warm_core_min,
// tc_min_lifetime, ar_ivt_min, ar_ivt_floor, ar_iwv_min, ar_min_length)
// may be given as lists; the engine runs one member per value. The
// agreement kind turns the members' masks into per-pixel fractions.
//
// # Output files (in the instance's directory)
//
//	mask.nc            coords time (units and calendar of fields.nc), lat, lon; class_mask byte
//	                   (time, lat, lon), flag_values 0b, 1b, 2b, flag_meanings "background
//	                   tropical_cyclone atmospheric_river", one step per chunk, deflate 1;
//	                   land_area_fraction (lat, lon) when fields.nc has it; Conventions CF-1.13,
//	                   history with kind, version, settings and inputs (no clock time).
//	tc_candidates.csv  step,time,lat,lon,slp_pa,max_wind_m_s,vorticity_s-1,warm_core_k,track_id
//	                   every candidate that passed the per-step criteria; track_id empty when
//	                   it is in no kept track.
//	tc_tracks.csv      track_id,point,step,time,lat,lon,slp_pa,max_wind_m_s,vorticity_s-1,warm_core_k
//	                   kept tracks, points numbered from 1.
//	ar_objects.csv     step,time,object,quantity,pixels,area_km2,length_km,width_km,aspect,
//	                   centroid_lat,centroid_lon,max_value,kept,reason
//	                   every above-threshold object and why it was dropped.
//
// In the CSV tables step is the 0-based time index in mask.nc, time the
// model-calendar date "YYYY-MM-DD hh:mm:ss", lat/lon degrees (lon in the
// grid's convention), vorticity the hemisphere-signed extreme in the box,
// warm_core the summed anomaly in K, max_value IVT (kg m-1 s-1) or IWV
// (kg m-2) as named by quantity; a value that could not be computed (its
// field absent) is empty. Only the tables of labelled classes are written.
//
// # Determinism and costs
//
// Same inputs and settings give byte-identical files (sorted iteration,
// fixed number formats, no clock). Two passes over the block: the first
// reads the TC fields step by step and finds candidates, then tracks are
// stitched; the second reads the 10 m wind (steps with storms) and the AR
// quantity, and writes the mask one step at a time. Memory is a few
// fields, whatever the block's length. All netCDF calls run on the calling
// goroutine. BenchmarkLabel reports steps per second and the ratio to a
// plain read of the same file; BenchmarkDetectAR and
// BenchmarkFindCandidates report grid points per second.
package label
