// Package subset is the subset stage kind (register subset.Kind{}): it
// cuts the campaign's channels out of a scenario's raw model files for one
// year block and writes them as one CF netCDF-4 file, fields.nc, the input
// of labelling, normalisation and everything after.
//
// # What one instance does (FanBlock: one scenario, one year, one member)
//
//   - Finds each channel's variable in the block's raw files (inputs of kind
//     "scenario"): by CF standard_name first, then by the file names the
//     campaign's variables: section maps to that standard name; a channel
//     with `variable:` names the file variable directly. A variable absent
//     from every file is an error that lists each file's variables with
//     their standard names. Variables must be (time, lat, lon) or (time,
//     level, lat, lon); units are converted to the channel's units (Pa/hPa,
//     K/degC, kg m-2/mm, ...) and missing or unconvertible units are errors
//     naming the variable, the file and both units.
//   - Time: the file's CF time axis is decoded in its model calendar
//     (standard, proleptic_gregorian, julian, noleap/365_day,
//     all_leap/366_day, 360_day); only steps in the block's calendar year are
//     kept, then the months setting, then every time_stride-th step. Every
//     variable must have the same steps; a calendar that differs from the
//     scenario's declared one is an error. Several files may share a
//     variable (split in time) as long as they do not overlap.
//   - Levels: on pressure levels (Pa or hPa in the file) a channel's level
//     must exist in the file. On hybrid sigma-pressure levels (CF appendix
//     D, p = a*p0 + b*ps, or the CAM layout hyam/hybm/P0/PS) values are
//     interpolated to the level linearly in ln p between the two bracketing
//     model levels of each column; a level below the lowest model level
//     (towards or under the surface) or above the top is a fill value,
//     never extrapolated.
//   - Box: rows with lat_min <= lat <= lat_max; columns within the eastward
//     arc from lon_min to lon_max, which may cross 0 or 180 degrees (lon_min
//     > lon_max). Longitudes are written increasing (a box 350..10 on a
//     0..360 grid is written -10..10); latitudes keep the file's order.
//   - Derived channels (Channel.Derived):
//     wind_speed = sqrt(u^2+v^2) at the channel's level (single-level u, v
//     when it has none);
//     relative_vorticity = [dv/dlambda - d(u cos phi)/dphi] / (R cos phi),
//     centred differences over the grid's own spacing, R = 6371008.7714 m,
//     at the channel's level or vorticity_level (850 hPa); a one-cell halo
//     is read around the box so its edges are exact, the grid's outermost
//     rows are fill;
//     iwv = (1/g) int q dp, ivt_u = (1/g) int q u dp, ivt_v = (1/g) int q v dp,
//     ivt = sqrt(ivt_u^2 + ivt_v^2), from ivt_top to ivt_bottom (300 to
//     1000 hPa; AMS Glossary), g = 9.80665 m s-2. The integral is the
//     trapezoid rule in pressure over the column's levels where the
//     integrand is defined: levels that are fill (below ground) drop out
//     and their neighbours are joined; layers straddling a limit are cut
//     there with the integrand linear in p; nothing is extrapolated beyond
//     the outermost defined levels (a column whose lowest level is 850 hPa
//     integrates from 850 hPa). On hybrid levels the integral runs over the
//     model levels themselves, p = a*p0 + b*ps per column.
//
// # Output: fields.nc
//
// The shared format of the brief: dims time, lat, lon; coordinates time
// (the source's units and calendar; a missing calendar is written as
// "standard", the CF default), lat (degrees_north), lon (degrees_east); one
// float variable per channel named after it, (time, lat, lon), with
// standard_name (when one exists), long_name, units, _FillValue
// (9.96921e36, the library default), quantity (the CF standard name, the
// file's name for a variable that has none, or for derived channels one of
// wind_speed, relative_vorticity, ivt, ivt_u, ivt_v, iwv), level_pa
// (double, Pa) on level channels, layer_bottom_pa/layer_top_pa on
// integrals and a comment on interpolated or derived ones. If the raw files
// have land_area_fraction (standard_name or mapped name, (lat, lon) or
// (time, lat, lon)), it is copied as a 2-D float fraction. Channels are
// chunked one time step per chunk (1, nlat, nlon), zlib level `deflate` with
// shuffle. Global attributes: Conventions = CF-1.13, title, and history
// with tool, kind version, settings and input file names (sizes are not
// hashed here: the cache already digests raw inputs). No wall-clock time
// appears anywhere, so reruns are byte-identical.
//
// # Costs
//
// One pass over the block: libnetcdf runs on one goroutine, which reads
// step t+1 while the other CPUs interpolate and derive step t
// (stream.Steps). Memory is a few time steps of the read window: the
// levels needed per variable (every level for hybrid input, the levels
// inside the integral for IVT), never the whole year. Output is written
// one step at a time.
package subset
