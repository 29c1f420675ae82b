// Package grid is the spherical geometry shared by squall's stages: regular
// latitude-longitude grids, cell areas, great-circle distances, boxes and
// polygons, connected components of masks, object shape (length, width),
// finite differences on the sphere, local extrema and nearest-neighbour
// regridding. It has no stage of its own and reads or writes no files.
//
// # Where things are
//
//	grid.go        Grid, New, Regular, Global, Locate, SameAs
//	area.go        EarthRadius, CellArea (CF-1.13 7.2), cell bounds, CellAreas, AreaMean
//	distance.go    CentralAngle, Distance, InitialBearing, Destination, Midpoint,
//	               longitude helpers, Box and InBox
//	polygon.go     GeoJSON polygons across the antimeridian and around poles,
//	               PolygonMask, RegionMask
//	components.go  connected components of a mask (8 neighbours, periodic)
//	geometry.go    Shape (length, width, axis) and MeanFlow of an object
//	derivative.go  RelativeVorticity, Divergence, DDLon, DDLat
//	extrema.go     LocalMinima, LocalMaxima
//	regrid.go      NearestMap, RegridNearest
//
// # Conventions
//
//   - Angles are degrees in the API and radians inside formulas; distances
//     and areas are metres and square metres on a sphere of radius
//     EarthRadius (GRS80 mean radius R1). The Earth's flattening (1/298) is
//     ignored, as CF cell areas on a sphere do; spherical distances differ
//     from ellipsoidal ones by up to about 0.5% (from memory).
//   - A Grid holds latitudes in either order (south-to-north or
//     north-to-south) and longitudes that increase eastwards, written in
//     0..360 or -180..180 (a regional grid may cross the antimeridian, e.g.
//     170, 175, 180, -175). Spacing must be regular (see SpacingTolerance);
//     Gaussian or other irregular grids are refused. Build grids with New
//     (or Regular, Global); a Grid literal lacks the validated spacing.
//   - 2-D fields are flat slices in (lat, lon) row-major order, the order of
//     a netCDF variable with dims (lat, lon): element Index(i, j) = i*NLon()+j.
//     A (time, lat, lon) variable is a sequence of such slices.
//   - A global grid (Periodic) wraps in longitude: neighbours, components,
//     finite differences and windows cross the date line. Nothing crosses a
//     pole: the rows nearest a pole have no neighbour beyond it.
//   - NaN marks missing data. Functions that read fields skip NaN or return
//     NaN where a result cannot be formed, never a made-up number.
//   - Box has the fields of pipeline.Box in the same order, so a campaign
//     region converts directly: (*grid.Box)(region.Box). grid does not
//     import pipeline.
//
// # Costs
//
// Cell areas, component labelling, finite differences, area means and
// regridding are linear in the number of grid points. Component labelling
// uses union-find (near-linear); BenchmarkComponents reports pixels per
// second on a 1440x720 mask. LocalMinima costs up to (2r+1)^2 comparisons
// per point. PolygonMask costs O(rows x vertices) plus a binary search per
// cell. Shape finds the exact spherical diameter of an object with a search
// pruned by latitude rows; see its doc for the cost and the worst case.
//
// Everything is pure Go (no cgo), deterministic (no map iteration order or
// randomness reaches a result) and safe for concurrent use: a Grid is
// read-only after New.
package grid
