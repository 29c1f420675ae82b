// Package grid is the spherical geometry shared by squall's stages: regular
// latitude-longitude grids, cell areas, great-circle distances, boxes and
// polygons, connected components of masks, object shape (length, width),
// finite differences on the sphere, local extrema and nearest-neighbour
// regridding.
//
// # Conventions
//
//   - Angles are degrees in the API and radians inside formulas; distances
//     and areas are metres and square metres on a sphere of radius
//     EarthRadius (GRS80 mean radius R1).
//   - A Grid holds latitudes in either order (south-to-north or
//     north-to-south) and longitudes that increase eastwards, written in
//     0..360 or -180..180 (a regional grid may cross the antimeridian, e.g.
//     170, 175, 180, -175). Spacing must be regular (see SpacingTolerance);
//     Gaussian or other irregular grids are refused.
//   - 2-D fields are flat slices in (lat, lon) row-major order, the order of
//     a netCDF variable with dims (lat, lon): element Index(i, j) = i*NLon()+j.
//   - A global grid (Periodic) wraps in longitude: neighbours, components,
//     finite differences and windows cross the date line. Nothing crosses a
//     pole: the rows nearest a pole have no neighbour beyond it.
//   - NaN marks missing data. Functions that read fields skip NaN or return
//     NaN where a result cannot be formed, never a made-up number.
//
// # Costs
//
// Cell areas, component labelling, finite differences and regridding are
// linear in the number of grid points. Component labelling uses union-find
// (near-linear; see BenchmarkComponents for pixels per second on a
// 1440x720 mask). LocalMinima costs (2r+1)^2 comparisons per point. Object
// length is an exact farthest-pair search pruned by latitude rows; see
// Shape for its cost.
//
// This package reads and writes no files and has no stage of its own; it
// uses no cgo and is safe for concurrent use (a Grid is read-only after New).
package grid
