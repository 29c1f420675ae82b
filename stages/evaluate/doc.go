// Package evaluate is the evaluate stage kind: it scores candidate class
// masks (a network's predictions, or a second labelling) against reference
// masks (heuristic labels, hand labels, or the invented world's truth), both
// in the shared mask.nc format, on the same grid and time steps. Scores of
// detections from model output are research results, not warnings.
//
// The kind fans in over the whole campaign (FanCampaign), so one set of
// tables covers every scenario, block, region, season and sweep member.
// Candidates come from the stage named by the setting candidate; the
// reference from the stage named by reference (same scenario and block;
// the same sweep member when the reference has members, else its only
// instance) or from the file pattern reference_files ({scenario} and
// {block}, e.g. world/{scenario}/truth_{block}.nc). Masks on different
// grids or times, or with values outside flag_values, are errors naming
// both files.
//
// # Pixel scores
//
// A confusion matrix over the three classes, rows = reference, columns =
// candidate (scikit-learn's orientation), counted in pixel-steps ("count")
// and in pixel-steps weighted by cell area in km2 ("area"; CF-1.13 cell
// areas on a sphere, so polar cells weigh what they cover). Per class,
// one versus the rest: TP, FP, FN, TN, IoU = TP/(TP+FP+FN), precision =
// TP/(TP+FP), recall = TP/(TP+FN), F1 = 2TP/(2TP+FP+FN); the "mean" row
// holds the macro means over classes where each is defined (mean IoU) and
// the overall accuracy. Undefined ratios are empty in CSV and null in JSON.
//
// # Event scores
//
// Events are space-time objects built as in the catalog (see MatchingRule
// and catalog.Linker): per class, 8-connected regions per step, periodic
// in longitude, linked through time by overlap or centroid distance.
// Reference and candidate events of the same class that share a cell at a
// step are paired one-to-one, greedily by decreasing space-time IoU (area
// x steps), when IoU >= event_iou_min (default 0: any overlap). Hits are
// matched reference events, misses unmatched ones, false alarms unmatched
// candidate events; correct negatives are quiet steps (CorrectNegativesRule:
// steps with no pixel of the class in either mask in the region). From the
// table: POD, FAR, POFD, CSI, frequency bias, proportion correct, Heidke,
// Peirce, Gilbert (equitable threat) and the odds ratio (Table; checked
// against Finley 1884). An event counts in the season of its first step
// and in every region it touches.
//
// # Breakdowns
//
// Every row carries member ("" when not a sweep), scenario (each, and
// "all"), region ("all" = the whole grid, then each campaign region by the
// cells whose centres lie in it), season ("all", DJF, MAM, JJA, SON by the
// month of the model calendar) and class.
//
// # Output files
//
//	scores.json        {kind, version, settings, classes, event_matching,
//	                    correct_negatives, weighting, caution, pixel: [...],
//	                    confusion: [...], events: [...]} (rows as below)
//	pixel_scores.csv   member, scenario, region, season, weighting, class,
//	                   tp, fp, fn, tn, iou, precision, recall, f1, accuracy
//	confusion.csv      member, scenario, region, season, weighting,
//	                   reference_class, candidate_class, value
//	event_scores.csv   member, scenario, region, season, class, hits,
//	                   false_alarms, misses, correct_negatives, pod, far,
//	                   pofd, csi, frequency_bias, proportion_correct,
//	                   heidke, peirce, gilbert, odds_ratio
//	maps_<scenario>[_<member>].nc
//	                   hit_frequency, miss_frequency, false_alarm_frequency
//	                   (class, lat, lon): the fraction of the series' steps
//	                   at which both masks, only the reference, or only the
//	                   candidate have the class at the cell; class = 1, 2
//
// Member names in file names keep letters, digits, '.', '_' and '-'; other
// characters become '-'.
//
// # Costs
//
// One pass over each pair of masks: per step, a confusion update per cell
// and per region cell, component labelling and linking per class and mask
// (linear in pixels), and the overlap of candidate pixels with reference
// labels. Memory: the per-cell map counters (3 int32 per class and cell
// per series) and per-event totals.
package evaluate
