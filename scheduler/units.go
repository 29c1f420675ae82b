package scheduler

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"

	"gopkg.in/yaml.v3"
)

// Size is a number of bytes. In YAML it is written with a unit: decimal
// (kB, MB, GB, TB, PB = 10^3n bytes, as disk vendors and schedulers' "G"
// suffix on most sites mean) or binary (KiB, MiB, GiB, TiB = 2^10n), or a
// bare integer of bytes.
type Size int64

var sizeUnits = []struct {
	suffix string
	mult   float64
}{
	{"KiB", 1 << 10}, {"MiB", 1 << 20}, {"GiB", 1 << 30}, {"TiB", 1 << 40}, {"PiB", 1 << 50},
	{"kB", 1e3}, {"KB", 1e3}, {"MB", 1e6}, {"GB", 1e9}, {"TB", 1e12}, {"PB", 1e15},
	{"B", 1},
}

// ParseSize reads "800GB", "1.5 TiB", "4096".
func ParseSize(s string) (Size, error) {
	t := strings.TrimSpace(s)
	mult := 1.0
	for _, u := range sizeUnits {
		if strings.HasSuffix(t, u.suffix) {
			t, mult = strings.TrimSpace(strings.TrimSuffix(t, u.suffix)), u.mult
			break
		}
	}
	f, err := strconv.ParseFloat(t, 64)
	if err != nil || f < 0 || math.IsInf(f, 0) || math.IsNaN(f) || f*mult > math.MaxInt64/2 {
		return 0, fmt.Errorf("not a size: %q (write e.g. 800GB, 512GiB or a number of bytes)", s)
	}
	return Size(math.Round(f * mult)), nil
}

// UnmarshalYAML accepts a bare integer or a string with a unit.
func (z *Size) UnmarshalYAML(n *yaml.Node) error {
	v, err := ParseSize(n.Value)
	if err != nil {
		return fmt.Errorf("line %d: %w", n.Line, err)
	}
	*z = v
	return nil
}

// String prints decimal units with three significant digits.
func (z Size) String() string {
	f := float64(z)
	for _, u := range []struct {
		s string
		m float64
	}{{"PB", 1e15}, {"TB", 1e12}, {"GB", 1e9}, {"MB", 1e6}, {"kB", 1e3}} {
		if f >= u.m {
			return strconv.FormatFloat(f/u.m, 'g', 4, 64) + " " + u.s
		}
	}
	return strconv.FormatInt(int64(z), 10) + " B"
}

// Duration is a wall-clock length. In YAML: a Go duration ("36h", "1h30m")
// or the schedulers' clock form "HH:MM:SS", "MM:SS" or "D-HH:MM:SS".
type Duration time.Duration

// ParseDuration reads both forms.
func ParseDuration(s string) (Duration, error) {
	t := strings.TrimSpace(s)
	if d, err := time.ParseDuration(t); err == nil {
		return Duration(d), nil
	}
	days := 0
	if i := strings.IndexByte(t, '-'); i > 0 {
		d, err := strconv.Atoi(t[:i])
		if err != nil || d < 0 {
			return 0, fmt.Errorf("not a duration: %q (write e.g. 24h, 1h30m or 12:00:00)", s)
		}
		days, t = d, t[i+1:]
	}
	parts := strings.Split(t, ":")
	if len(parts) < 2 || len(parts) > 3 {
		return 0, fmt.Errorf("not a duration: %q (write e.g. 24h, 1h30m or 12:00:00)", s)
	}
	total := 0
	for _, p := range parts {
		v, err := strconv.Atoi(p)
		if err != nil || v < 0 || len(p) == 0 {
			return 0, fmt.Errorf("not a duration: %q (write e.g. 24h, 1h30m or 12:00:00)", s)
		}
		total = total*60 + v
	}
	return Duration(time.Duration(days*86400+total) * time.Second), nil
}

// UnmarshalYAML accepts either form.
func (d *Duration) UnmarshalYAML(n *yaml.Node) error {
	v, err := ParseDuration(n.Value)
	if err != nil {
		return fmt.Errorf("line %d: %w", n.Line, err)
	}
	*d = v
	return nil
}

// Clock formats as HH:MM:SS (hours may exceed 24), the form every engine
// here accepts for a walltime.
func (d Duration) Clock() string {
	s := int64(time.Duration(d) / time.Second)
	return fmt.Sprintf("%02d:%02d:%02d", s/3600, s/60%60, s%60)
}

// Minutes rounds up to whole minutes (LSF's -W and -wt take minutes).
func (d Duration) Minutes() int64 {
	return int64((time.Duration(d) + time.Minute - 1) / time.Minute)
}

func (d Duration) String() string { return time.Duration(d).String() }
