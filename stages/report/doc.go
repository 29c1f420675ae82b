// Package report writes the campaign report: one self-contained HTML page
// that a scientist opens from disk after every run. It is not a cached
// stage; the command line fills an Input from the run record and calls
// Write.
//
// The page shows the campaign at a glance (scenarios, years, channels, the
// stage graph with every instance's state and time, what was reused and
// what failed), label class fractions, evaluation tables, event counts and
// category distributions per scenario, event-frequency maps per scenario
// with their differences, trend plots per region with the Sen slope and its
// confidence band, and the reproducibility record. A caution near the top
// says that heuristic detections and trends from model output are
// research results, not forecasts or warnings.
//
// # What it reads
//
// Only the directories listed in Input.Outputs, by stage kind:
//
//	label     mask.nc: area-weighted class fractions (every k-th time step once the
//	          masks exceed 2e8 cells in total, k chosen to stay under that)
//	evaluate  pixel_scores.csv and event_scores.csv, rows with region and season "all"
//	catalog   events.csv: counts, rates, durations, landfalls; Saffir-Simpson categories
//	          (saffir_simpson_category, storm_stage) and peak-IVT bins (max_ivt_kg_m_s)
//	trends    trends.json (series, trends, differences) and maps.nc (frequency maps)
//
// Columns are found by name. A section whose outputs are absent says so
// plainly; an unreadable file becomes a note in its section instead of
// failing the page.
//
// # The page
//
// Plain HTML with inline CSS and inline SVG drawn by gonum.org/v1/plot
// (maps as embedded PNG data inside the SVG): no script, no web font, no
// reference to any network resource, so it opens offline and prints.
// Plot text uses Liberation Sans, the font gonum/plot measures with; the
// page asks for it, then Arial or Helvetica, which share its metrics.
// Tick labels are written to the precision of the tick spacing ("0.3",
// never the binary residue of 0.1+0.2). The class-fraction chart lays its
// bars out horizontally, one row per label output, so sweep members' long
// names stay legible; the stage graph routes edges through the gutters
// between boxes, never under one. Undefined scores (empty in the evaluate
// kind's CSV) show as "–". Tests check that no plot text overlaps other
// text or is cut off, with Liberation Sans glyph metrics. The
// output is deterministic: the same Input and outputs give the same bytes
// (Input.When is shown only when set).
//
// # Costs
//
// Reading masks dominates for large campaigns (bounded as above); the rest
// is proportional to events and series. BenchmarkWrite reports the time to
// write a report for a campaign of the trends benchmark's shape.
package report
