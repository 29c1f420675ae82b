// Package label writes heuristic per-pixel class masks (background,
// tropical cyclone, atmospheric river) from published threshold criteria.
//
// Work in progress: the detectors (candidates, track stitching, footprints,
// IVT integration) are here; the stage kind follows.
package label
