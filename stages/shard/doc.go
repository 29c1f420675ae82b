// Package shard is the shard stage kind (register shard.Kind{}): one
// instance for the whole campaign (FanCampaign) that turns the blocks of
// normalised fields (normalized.nc from normalize, or fields.nc from subset
// when nothing is normalised) and, optionally, class masks (mask.nc from a
// label stage) into training-ready shards and a manifest.
//
// # Split
//
// Whole years only: a sample (one time step) belongs to the set of its
// year. Years come from the campaign's split (split.train/validate/test) or,
// with the fractions setting (train, validate, test), from cutting the
// sorted input years into three contiguous runs, earliest for training,
// sized by the largest remainder method (AssignYears). Years in no set are
// listed as unused. With gap_days (the setting, or the campaign's
// split.gap_days when the setting is -1) the samples within that many days
// after each boundary between two different sets are dropped (InGap),
// because 3- or 6-hourly neighbours are nearly identical. The split is
// recorded in the manifest and depends only on the years, so it is stable.
//
// # Shards: <set>-<NNNN>.nc
//
// Per set, samples in (scenario, year, time) order, or shuffled with
// shuffle_seed (PCG, deterministic), cut into files of samples_per_shard
// samples (the last may be shorter): train-0000.nc, ..., validate-0000.nc,
// test-0000.nc. Each is netCDF-4 with dims sample, channel, lat, lon and
//
//	input(sample, channel, lat, lon)  float (or short holding binary16 bits,
//	                                  attribute encoding, when normalised in
//	                                  half precision), chunked (1, channel,
//	                                  lat, lon): one sample per chunk;
//	                                  attributes channels, channel_quantities,
//	                                  channel_level_pa, normalization_offset,
//	                                  normalization_scale
//	class_mask(sample, lat, lon)      byte, flag_values/flag_meanings of the
//	                                  masks, chunked (1, lat, lon); only with
//	                                  mask inputs
//	time(sample)                      double, units and calendar of the inputs
//	scenario(sample)                  int, flag_values/flag_meanings = scenario names
//	source_step(sample)               int, time index in the source file
//	lat, lon                          coordinates
//
// Values are copied, not recomputed: reading a shard gives exactly the
// arrays of its source files (fill values as _FillValue). The deflate
// setting (default 0) trades size for read speed.
//
// # manifest.json (Manifest, format 1)
//
//	format, kind, kind_version
//	encoding            "float32" or "binary16"
//	channels            [{name, quantity, level_pa, units, normalization_method,
//	                      normalization_offset, normalization_scale}]
//	nlat, nlon, bytes_per_sample (uncompressed input + mask)
//	classes             class names by value ([] without masks)
//	split               {method: "campaign"|"fractions", fractions, gap_days,
//	                      train_years, validate_years, test_years, unused_years,
//	                      gap_dropped_samples}
//	sets                [{set, samples, shards, bytes, class_pixels, class_frequency}]
//	                     in the order train, validate, test
//	shards              [{file, set, samples, bytes, blake3, class_pixels,
//	                      class_frequency, unlabelled_pixels}]; file is relative
//	                     to the stage's output directory, bytes the file size,
//	                     blake3 the hex BLAKE3-256 digest of the file
//	class_pixels, class_frequency   over all shards
//	loss_weights        {inverse_frequency, inverse_sqrt_frequency,
//	                      effective_number, effective_number_beta, source} from
//	                     the TRAINING set's pixel counts only (never validation or
//	                     test); each list normalised to sum to the number of
//	                     classes present; effective number after Cui et al.
//	                     (2019, CVPR), w = (1 - beta) / (1 - beta^n)
//	ranks               {count, ranks_per_node, nodes,
//	                      train:    [{rank, node, shards: [file...], samples, bytes}],
//	                      validate: [...], test: [...],   one entry per rank
//	                      node_bytes: [{node, ranks, train_bytes, validate_bytes,
//	                                    test_bytes, bytes}]}
//
// For the batch-script stage: rank r of a job reads ranks.train[r].shards
// (and validate, test likewise); node n stages node_bytes[n].bytes, the
// shards of ranks n*ranks_per_node .. (n+1)*ranks_per_node-1. Every shard of
// a set is on exactly one rank (disjoint and complete); shards are balanced
// in bytes by the longest-processing-time rule (largest first to the least
// loaded rank), within 4/3 of the best balance (Graham 1969). A rank may
// have no shard when a set has fewer shards than ranks (logged).
//
// Class frequencies: in the trade, background is typically about 95% of
// the pixels of TC/AR masks, which is why the loss weights are suggested.
//
// # Costs
//
// One pass over the inputs on one goroutine (libnetcdf), one sample in
// memory at a time, every shard read once more for its digest. At most four
// inputs are open at once (each open netCDF-4 file holds its own chunk
// caches), so memory does not grow with the number of years; in time order
// each input is opened once, with shuffle_seed an input may be reopened for
// many samples (a few milliseconds each).
package shard
