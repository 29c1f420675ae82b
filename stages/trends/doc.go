// Package trends is the "trends" stage kind: how often, how long and how
// strong events are, per region, class and scenario, whether that changes
// over the years, and how scenarios differ. It also holds the statistics
// it uses (Mann-Kendall, Sen, least squares, rank-sum, bootstrap) as plain
// functions.
//
// Results are research output computed from climate-model data with
// heuristic detections; they are not forecasts or warnings (trends.json
// and maps.nc carry that caution).
//
// # Inputs
//
// One instance for the whole campaign (FanCampaign). It reads every input
// instance that holds events.csv (a catalog; per block or per scenario),
// grouped by (scenario, member), and every input holding mask.nc (label or
// prediction masks, optional, for frequency maps). Catalog columns are
// found by name, lower case, first match wins, extra columns ignored:
//
//	events.csv       id | event_id; class (tropical_cyclone, atmospheric_river, TC, AR, 1, 2);
//	                 year, or start | start_time (a model-calendar date "YYYY-MM-DD...",
//	                 of which only the year is read, so 360_day dates such as 02-30 pass);
//	                 duration_days, or duration_hours | duration_h;
//	                 landfall (true/false, or a non-empty time = true), landfall_lat, landfall_lon;
//	                 intensity: max_wind_ms | max_wind (cyclones, m s-1), max_ivt (rivers, kg m-1 s-1);
//	                 regions | regions_touched (names separated by ; | , or space).
//	track_points.csv event_id | id; lat; lon (one row per event and time step).
//
// Years: an instance with a block ("1990") contributes that year; a
// catalog without a block spans its scenario's blocks (or first..last year)
// from the campaign; years of event start dates are added. A year with no
// event counts as zero events. An event belongs to the year of its start.
//
// Regions: the implicit whole-domain region (setting whole_domain_region,
// "domain" by default) plus the campaign's regions: boxes (grid.InBox: a
// LonMin greater than LonMax crosses the antimeridian) or GeoJSON polygons
// (rings unwrapped in longitude, so polygons across the antimeridian work
// in either convention; holes excluded; rings around a pole unsupported).
// An event is in a region when any of its track points is; without
// track_points.csv, when the catalog's regions column names it.
//
// # Series (metric column)
//
//	events          events starting in the year that touch the region
//	event_days      sum of their durations (whole event, days)
//	landfalls       of those events, the ones with landfall; when the catalog gives the
//	                landfall position it must lie in the region
//	mean_intensity  mean over those events of their peak intensity (null in years without events)
//	max_intensity   maximum of the same
//
// event_days, landfalls and the intensities are left out when no catalog
// row carries the column they need.
//
// # Statistics
//
// Per series with at least min_years values (else status "too few years
// (n, need m)" and empty statistics): Mann-Kendall S with the tie-corrected
// variance (Gilbert 1987, ch. 16), continuity-corrected Z and two-sided p;
// optionally the Hamed & Rao (1998) variance correction for serial
// correlation (serial_correction: hamed-rao-1998). The p-value is exact
// for short series: with n <= mk_exact_max_n (default 10) values, no two
// tied and no serial correction, p = P(|S| >= |s|) under the exact null
// distribution of S (S = n(n-1)/2 - 2Q, Q the inversions of a random
// ordering, counted by the Mahonian numbers in integers); otherwise the
// normal approximation above (p_method says which). The cut-off 10 follows
// Gilbert's exact table (n <= 10; from memory), below which the normal
// approximation is rough (n = 6, S = 15: exact 0.0028, normal 0.0085);
// counts stay exact in float64 up to n = 18 (18! < 2^53), the setting's
// maximum. Ties keep the normal approximation because the tie-corrected
// exact distribution depends on the tie pattern. The USEPA examples
// (n = 10) use the normal approximation: set mk_exact_max_n 9 to reproduce
// them. Sen's (1968) slope with
// Gilbert's confidence interval (ranks interpolated linearly); ordinary
// least squares with standard errors and a Student-t p. Slopes are per
// decade. Between each scenario and the baseline (same member when there
// are members): means, difference and ratio with percentile bootstrap
// intervals (resampling years within each scenario; bootstrap_resamples;
// a PCG stream per comparison seeded from seed and the row's names, so
// adding a region does not change other rows), and the Mann-Whitney
// rank-sum p (exact for small untied samples, else normal with tie and
// continuity corrections, as scipy.stats.mannwhitneyu).
//
// # Outputs
//
//	trends.json      everything below plus the series values, settings and the caution
//	trends.csv       one row per series: region, class, scenario, member, metric, unit, status,
//	                 n_years, first_year, last_year, mean, mk_correction, mk_s, mk_var_s
//	                 (after correction), mk_variance_factor (n/n*), mk_tau (S/(n(n-1)/2)), mk_z,
//	                 mk_p, p_method ("exact" or "normal": how mk_p was computed, empty
//	                 without a p-value; mk_z is the normal statistic either way),
//	                 sen_slope_per_decade, sen_low_per_decade, sen_high_per_decade,
//	                 sen_intercept (value at year 0: median(x) - slope*median(year), slope per
//	                 year), ols_slope_per_decade, ols_slope_se_per_decade, ols_intercept (year
//	                 0), ols_intercept_se, ols_r2, ols_p, confidence
//	series.csv       long format: region, class, scenario, member, metric, unit, year, value
//	differences.csv  region, class, metric, unit, scenario, member, baseline, status, n_years,
//	                 n_years_baseline, mean, mean_baseline, difference (scenario - baseline),
//	                 difference_low, difference_high, ratio (scenario / baseline), ratio_low,
//	                 ratio_high, rank_sum_u (U of the scenario), rank_sum_p, rank_sum_exact,
//	                 bootstrap_resamples, confidence
//	maps.nc          CF-1.13 netCDF-4, dims (lat, lon); per class and sample a float variable
//	                 <class>_frequency_<scenario>[_<member>], and per non-baseline sample
//	                 <class>_frequency_difference_<scenario>_minus_<baseline>
//
// Empty CSV cells and JSON nulls mean "no value". Maps: with mask inputs,
// the fraction of time steps each cell lies inside an event of the class
// (units 1, the mask grid; all mask files of a scenario pooled); without
// masks, catalog track points (event centroids) per year in cells of a
// global grid of map_resolution degrees (units year-1). For rivers the
// mask-based map is the meaningful one: a centroid says little about where
// a long river lies, so connect the label stage when river maps matter.
// No map file is written when neither masks nor track points exist.
//
// # Checks
//
// stats_test.go and scipy_test.go: USEPA (2009) Unified Guidance Example
// 17-7 (S, Var(S), tau, Z, p, Sen slope, intercept and 95 % interval);
// the Holy Cross "Mann-Kendall by hand" handout with a tie (S, Var(S), Z,
// one-sided p); the exact p against scipy.stats.kendalltau(method="exact")
// for n = 4..10 (1e-12) and a hand count for n = 4; NIST StRD Norris for
// least squares (12+ digits); seeded
// random series against Debian's scipy.stats (kendalltau, theilslopes,
// linregress, mannwhitneyu exact and asymptotic); the Hamed-Rao factor
// against the formula written out independently in Python (derived).
// kind_test.go: planted series with counts known by construction, regions
// across the antimeridian, 360_day dates, byte-identical reruns, and the
// maps.nc header read back with ncdump.
//
// # Costs
//
// Mann-Kendall is O(n^2) and Sen O(n^2 log n) per series of n years; the
// bootstrap costs resamples x n per difference row. Series are analysed on
// GOMAXPROCS goroutines; netCDF is touched from one goroutine only.
// BenchmarkRun measures 5 scenarios x 100 years x 20 regions.
package trends
