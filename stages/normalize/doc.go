// Package normalize holds two stage kinds (register normalize.FitKind{} and
// normalize.Kind{}) that turn fields into network inputs with statistics
// fitted on the training period only, plus half-precision conversion.
//
// # fit-stats (FanCampaign) -> stats.json
//
// Reads the fields.nc (subset output) of every input whose block is a
// training year and fits, per channel, the count, mean, standard deviation
// (unbiased, n-1 for unit weights), minimum, maximum and quantiles, in one
// streaming pass: libnetcdf on one goroutine, each time step summarised on
// workers (corrected two-pass moments and a t-digest, package stream) and
// merged in file and time order (Chan et al.), so results are exact to
// about 13 digits and byte-identical across runs. With weighting cell_area
// every point is weighted by its cell's area on the sphere (stages/grid;
// regular grids only). Fill values never reach a statistic. Packed inputs
// (integers with scale_factor/add_offset) are accumulated as stored
// integers and mapped back once, which keeps decimal data exact.
//
// Leakage: the years come from the campaign's split.train, or from the
// years setting, which may only list training years. A year of split.test
// or split.validate is refused with a LeakageError at load time
// (CheckStage) and again at run time against the actual inputs.
//
// stats.json (Stats, format 1): {"format", "kind", "kind_version",
// "weighting", "training_years": [...], "blocks": [{"scenario", "block",
// "member"}], "quantile_levels": [...], "compression", "channels": [{"name",
// "quantity", "level_pa", "units", "count", "missing", "weight", "mean",
// "std", "min", "max", "quantiles": [...]}]}. Numbers are written in
// shortest round-trip form, so every reader gets the same float64 values.
//
// # normalize (FanBlock) -> normalized.nc
//
// Applies y = (x - offset) / scale per channel, with offset/scale from
// stats.json by method: standard (mean, std), min-max (min, max - min) or
// robust (median, q75 - q25). The file has the dims and coordinates of
// fields.nc and one variable per channel with the same name, attributes
// quantity, level_pa (as in fields.nc), units = "1", original_units,
// normalization_method, normalization_offset, normalization_scale and the
// statistics (stats_mean, stats_std, stats_min, stats_max, stats_count,
// stats_quantile_levels, stats_quantiles, stats_weighting,
// stats_training_years), so inference can apply or invert the very same
// map from the file alone; land_area_fraction is copied unchanged.
//
// precision float32 writes NC_FLOAT with _FillValue 9.96921e36. precision
// float16 writes NC_SHORT holding IEEE 754 binary16 bit patterns (netCDF
// has no half type): attribute encoding says so, _FillValue is 0x7e00
// (32256, a float16 NaN), and a reader reinterprets the bits (numpy:
// a.view(numpy.float16)). Rounding is to nearest even, as numpy does
// (checked bit for bit). The error half precision adds is recorded per
// channel as half_precision_max_abs_error, half_precision_max_rel_error
// (normal range; bounded by 2^-11) and half_precision_rms_error, in
// normalised units, and logged.
//
// # Costs
//
// Both kinds read each input once, one time step at a time; memory is a
// few time steps plus, for the fit, about 30 kB of digest per channel.
// The fit's cost is dominated by sorting each step for the digest (about
// 200 MB/s per core); normalize is bound by netCDF I/O.
package normalize
