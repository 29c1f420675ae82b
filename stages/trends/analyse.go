package trends

import (
	"context"
	"fmt"
	"hash/fnv"
	"math"
	"runtime"
	"sync"

	"github.com/squall-climate/squall/pipeline"
)

// Metric names (the "metric" column).
const (
	MetricEvents        = "events"
	MetricEventDays     = "event_days"
	MetricLandfalls     = "landfalls"
	MetricMeanIntensity = "mean_intensity"
	MetricMaxIntensity  = "max_intensity"
)

// Status values of trend and difference rows.
const (
	StatusOK       = "ok"
	StatusTooFew   = "too few years"
	StatusNoData   = "no data"
	StatusNoBase   = "no baseline"
	statusFailedAt = "failed: "
)

// result is the analysis before it is written.
type result struct {
	out           *Output
	baselineIndex int
}

// analyse builds every series, its trend and the scenario differences.
func analyse(ctx context.Context, cfg config, regions []region, samples []*sample, c *pipeline.CampaignInfo) (*result, error) {
	out := &Output{
		Caution:    Caution,
		Kind:       "trends",
		Version:    version,
		Confidence: 1 - cfg.alpha,
		Correction: cfg.correction,
		MinYears:   cfg.minYears,
		Resamples:  cfg.resamples,
		Seed:       cfg.seed,
	}
	for _, r := range regions {
		out.Regions = append(out.Regions, r.name)
	}
	// Classes: the two of mask.nc, then any other the catalogs name.
	classes := []string{ClassTC, ClassAR}
	seenClass := map[string]bool{ClassTC: true, ClassAR: true}
	present := map[string]bool{}
	for _, s := range samples {
		for _, e := range s.events {
			if !seenClass[e.class] {
				seenClass[e.class] = true
				classes = append(classes, e.class)
			}
			if !math.IsNaN(e.days) {
				present[MetricEventDays] = true
			}
			if e.landfall || !math.IsNaN(e.lfLat) {
				present[MetricLandfalls] = true
			}
			if !math.IsNaN(e.intensity) {
				present[MetricMeanIntensity+"/"+e.class] = true
			}
		}
	}
	out.Classes = classes
	for _, s := range samples {
		ys := s.sortedYears()
		sd := ScenarioYears{Scenario: s.Scenario, Member: s.Member, Years: len(ys), Events: len(s.events), TrackPoints: s.hasPoints}
		if len(ys) > 0 {
			sd.First, sd.Last = ys[0], ys[len(ys)-1]
		}
		out.Scenarios = append(out.Scenarios, sd)
	}
	// Region membership needs positions or the catalog's own list.
	for _, s := range samples {
		if s.hasPoints {
			continue
		}
		for _, r := range regions {
			if r.whole {
				continue
			}
			for _, e := range s.events {
				if e.regions == nil {
					return nil, fmt.Errorf("scenario %s: region %q needs event positions, but the catalog has no %s and no regions column; "+
						"keep the catalog's track points or remove the region", s.label(), r.name, TrackFile)
				}
			}
		}
	}

	// Series.
	for _, s := range samples {
		years := s.sortedYears()
		yi := map[int]int{}
		for i, y := range years {
			yi[y] = i
		}
		for ri := range regions {
			r := &regions[ri]
			for _, cl := range classes {
				n := len(years)
				count := make([]float64, n)
				days := make([]float64, n)
				land := make([]float64, n)
				isum := make([]float64, n)
				icnt := make([]float64, n)
				imax := make([]float64, n)
				for i := range imax {
					imax[i] = math.NaN()
				}
				for _, e := range s.events {
					if e.class != cl || !eventInRegion(e, r, s.hasPoints) {
						continue
					}
					i := yi[e.year]
					count[i]++
					if !math.IsNaN(e.days) {
						days[i] += e.days
					}
					if e.landfall {
						if math.IsNaN(e.lfLat) || r.contains(e.lfLat, e.lfLon) {
							land[i]++
						}
					}
					if !math.IsNaN(e.intensity) {
						isum[i] += e.intensity
						icnt[i]++
						if math.IsNaN(imax[i]) || e.intensity > imax[i] {
							imax[i] = e.intensity
						}
					}
				}
				imean := make([]float64, n)
				for i := range imean {
					imean[i] = math.NaN()
					if icnt[i] > 0 {
						imean[i] = isum[i] / icnt[i]
					}
				}
				add := func(metric, unit string, v []float64) {
					out.Series = append(out.Series, Series{Region: r.name, Class: cl, Scenario: s.Scenario, Member: s.Member,
						Metric: metric, Unit: unit, Years: years, Values: nums(v)})
				}
				add(MetricEvents, "events", count)
				if present[MetricEventDays] {
					add(MetricEventDays, "days", days)
				}
				if present[MetricLandfalls] {
					add(MetricLandfalls, "events", land)
				}
				if present[MetricMeanIntensity+"/"+cl] {
					add(MetricMeanIntensity, intensityUnit[cl], imean)
					add(MetricMaxIntensity, intensityUnit[cl], imax)
				}
			}
		}
	}

	// Trends, in parallel (pure computation; results land by index).
	out.Trends = make([]Trend, len(out.Series))
	if err := parallel(ctx, len(out.Series), func(i int) {
		out.Trends[i] = trendOf(&out.Series[i], cfg)
	}); err != nil {
		return nil, err
	}

	// Differences against the baseline scenario.
	base := cfg.baseline
	if base == "" {
		if len(c.Scenarios) > 0 {
			base = c.Scenarios[0].Name
		} else if len(samples) > 0 {
			base = samples[0].Scenario
		}
	}
	out.Baseline = base
	baseIdx := -1
	for i, s := range samples {
		if s.Scenario == base {
			baseIdx = i
			break
		}
	}
	type pair struct{ a, b int } // series indexes: baseline, other
	var pairs []pair
	key := func(s *Series) string { return s.Region + "\x00" + s.Class + "\x00" + s.Metric }
	baseSeries := map[string]map[string]int{} // member -> key -> index
	for i := range out.Series {
		s := &out.Series[i]
		if s.Scenario != base {
			continue
		}
		if baseSeries[s.Member] == nil {
			baseSeries[s.Member] = map[string]int{}
		}
		baseSeries[s.Member][key(s)] = i
	}
	for i := range out.Series {
		s := &out.Series[i]
		if s.Scenario == base {
			continue
		}
		bm := baseSeries[s.Member]
		if bm == nil && baseIdx >= 0 {
			bm = baseSeries[samples[baseIdx].Member]
		}
		j, ok := bm[key(s)]
		if !ok {
			j = -1
		}
		pairs = append(pairs, pair{j, i})
	}
	out.Differences = make([]Difference, len(pairs))
	if err := parallel(ctx, len(pairs), func(k int) {
		p := pairs[k]
		out.Differences[k] = differenceOf(out.Series, p.a, p.b, cfg)
	}); err != nil {
		return nil, err
	}
	return &result{out: out, baselineIndex: baseIdx}, nil
}

// eventInRegion: the whole domain holds everything; otherwise an event is
// in a region when any of its track points is, or (without track points)
// when the catalog lists the region among those it touched.
func eventInRegion(e *event, r *region, hasPoints bool) bool {
	if r.whole {
		return true
	}
	if hasPoints && len(e.lats) > 0 {
		for i := range e.lats {
			if r.contains(e.lats[i], e.lons[i]) {
				return true
			}
		}
		return false
	}
	for _, n := range e.regions {
		if n == r.name {
			return true
		}
	}
	return false
}

// trendOf computes the three trend estimates of one series.
func trendOf(s *Series, cfg config) Trend {
	t := Trend{Region: s.Region, Class: s.Class, Scenario: s.Scenario, Member: s.Member, Metric: s.Metric, Unit: s.Unit,
		Correction: cfg.correction}
	var ts, xs []float64
	for i, v := range s.Values {
		if !math.IsNaN(float64(v)) {
			ts = append(ts, float64(s.Years[i]))
			xs = append(xs, float64(v))
		}
	}
	t.NYears = len(xs)
	if len(xs) > 0 {
		t.FirstYear, t.LastYear = int(ts[0]), int(ts[len(ts)-1])
		t.Mean = Num(mean(xs))
	}
	nan := Num(math.NaN())
	t.MKS, t.MKVarS, t.MKFactor, t.MKTau, t.MKZ, t.MKP = nan, nan, nan, nan, nan, nan
	t.SenSlope, t.SenLow, t.SenHigh, t.SenIntercept, t.SenMedianYear, t.SenMedianValue = nan, nan, nan, nan, nan, nan
	t.OLSSlope, t.OLSSlopeSE, t.OLSIntercept, t.OLSInterceptSE, t.OLSR2, t.OLSP = nan, nan, nan, nan, nan, nan
	switch {
	case len(xs) == 0:
		t.Status = StatusNoData
		return t
	case len(xs) < cfg.minYears:
		t.Status = fmt.Sprintf("%s (%d, need %d)", StatusTooFew, len(xs), cfg.minYears)
		return t
	}
	mk, err := MannKendallExactUpTo(xs, cfg.correction, cfg.alpha, cfg.exactMaxN)
	if err != nil {
		t.Status = statusFailedAt + err.Error()
		return t
	}
	sen, err := SenSlope(ts, xs, mk.VarSUsed, cfg.alpha)
	if err != nil {
		t.Status = statusFailedAt + err.Error()
		return t
	}
	ols, err := LeastSquares(ts, xs)
	if err != nil {
		t.Status = statusFailedAt + err.Error()
		return t
	}
	t.Status = StatusOK
	t.PMethod = mk.PMethod
	t.MKS, t.MKVarS, t.MKFactor, t.MKTau, t.MKZ, t.MKP = Num(mk.S), Num(mk.VarSUsed), Num(mk.Factor), Num(mk.Tau), Num(mk.Z), Num(mk.P)
	t.SenSlope, t.SenLow, t.SenHigh = Num(10*sen.Slope), Num(10*sen.Low), Num(10*sen.High)
	t.SenIntercept = Num(sen.Intercept)
	t.SenMedianYear = Num(median(append([]float64(nil), ts...)))
	t.SenMedianValue = Num(median(append([]float64(nil), xs...)))
	t.OLSSlope, t.OLSSlopeSE = Num(10*ols.Slope), Num(10*ols.SlopeSE)
	t.OLSIntercept, t.OLSInterceptSE, t.OLSR2, t.OLSP = Num(ols.Intercept), Num(ols.InterceptSE), Num(ols.R2), Num(ols.P)
	return t
}

// differenceOf compares series b (a scenario) with series a (the baseline).
func differenceOf(series []Series, a, b int, cfg config) Difference {
	sb := &series[b]
	d := Difference{Region: sb.Region, Class: sb.Class, Metric: sb.Metric, Unit: sb.Unit, Scenario: sb.Scenario, Member: sb.Member}
	nan := Num(math.NaN())
	d.Mean, d.MeanBaseline, d.Diff, d.DiffLow, d.DiffHigh, d.Ratio, d.RatioLow, d.RatioHigh, d.RankSumU, d.RankSumP =
		nan, nan, nan, nan, nan, nan, nan, nan, nan, nan
	xb := finite(sb.Values)
	d.NYears = len(xb)
	if a < 0 {
		d.Status = StatusNoBase
		return d
	}
	sa := &series[a]
	d.Baseline = sa.Scenario
	xa := finite(sa.Values)
	d.NYearsBaseline = len(xa)
	if len(xa) > 0 {
		d.MeanBaseline = Num(mean(xa))
	}
	if len(xb) > 0 {
		d.Mean = Num(mean(xb))
	}
	switch {
	case len(xa) == 0 || len(xb) == 0:
		d.Status = StatusNoData
		return d
	case len(xa) < cfg.minYears || len(xb) < cfg.minYears:
		d.Status = fmt.Sprintf("%s (%d and %d, need %d)", StatusTooFew, len(xa), len(xb), cfg.minYears)
		return d
	}
	h := fnv.New64a()
	fmt.Fprintf(h, "%s\x00%s\x00%s\x00%s\x00%s\x00%s", sb.Region, sb.Class, sb.Metric, sb.Scenario, sb.Member, sa.Scenario)
	c, err := BootstrapMeans(xa, xb, cfg.resamples, cfg.seed^h.Sum64(), cfg.alpha)
	if err != nil {
		d.Status = statusFailedAt + err.Error()
		return d
	}
	rs, err := MannWhitney(xb, xa)
	if err != nil {
		d.Status = statusFailedAt + err.Error()
		return d
	}
	d.Status = StatusOK
	d.Diff, d.DiffLow, d.DiffHigh = Num(c.Diff), Num(c.DiffLow), Num(c.DiffHigh)
	d.Ratio, d.RatioLow, d.RatioHigh = Num(c.Ratio), Num(c.RatioLow), Num(c.RatioHigh)
	d.RankSumU, d.RankSumP, d.RankSumExact = Num(rs.U), Num(rs.P), rs.Exact
	return d
}

func finite(v []Num) []float64 {
	var out []float64
	for _, x := range v {
		if f := float64(x); !math.IsNaN(f) && !math.IsInf(f, 0) {
			out = append(out, f)
		}
	}
	return out
}

func nums(v []float64) []Num {
	out := make([]Num, len(v))
	for i, x := range v {
		out[i] = Num(x)
	}
	return out
}

// parallel runs f(0..n-1) on GOMAXPROCS goroutines and stops early when
// ctx is cancelled. f must only write its own result slot.
func parallel(ctx context.Context, n int, f func(i int)) error {
	workers := runtime.GOMAXPROCS(0)
	if workers > n {
		workers = n
	}
	var wg sync.WaitGroup
	next := make(chan int)
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				f(i)
			}
		}()
	}
	var err error
	for i := 0; i < n; i++ {
		if i%64 == 0 {
			if err = ctx.Err(); err != nil {
				break
			}
		}
		next <- i
	}
	close(next)
	wg.Wait()
	return err
}
