package scheduler

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"reflect"
	"regexp"
	"sort"
	"strings"
	"time"

	"gopkg.in/yaml.v3"
)

// Engines names the engines a profile may choose, in the order `squall`
// lists them.
var Engines = []string{"slurm", "pbs", "lsf", "local"}

// Profile describes one HPC site (or a workstation): which engine runs the
// jobs, where, on what shape of node, and how ranks are launched. It is a
// separate YAML file; the campaign file never names a site, so switching
// the profile re-targets every script without touching the science.
type Profile struct {
	// Engine is slurm, pbs, lsf or local (a plain shell on this machine).
	Engine string `yaml:"engine"`
	// Partition is the Slurm partition, PBS queue or LSF queue ("" = the
	// site's default).
	Partition string `yaml:"partition"`
	// Account is charged for the node-hours ("" = the user's default).
	Account string `yaml:"account"`
	Node    Node   `yaml:"node"`
	// Walltime is the longest a single job may run at this site.
	Walltime Duration `yaml:"walltime"`
	// MaxNodes is the most nodes one job may ask for (0 = no limit known).
	MaxNodes int `yaml:"max_nodes"`
	// Setup lines run at the start of every job before anything else:
	// module loads, a virtual environment. They are commands the site's
	// user wrote, emitted verbatim, one command per item.
	Setup []string `yaml:"setup"`
	// Launcher is the argv that starts ranks across the job's nodes, one
	// word per item, with placeholders {nodes}, {ranks}, {ranks_per_node},
	// {cores_per_rank}, {accelerators_per_rank}; the command to launch is
	// appended. Empty: the engine's default (see DefaultLauncher).
	Launcher []string `yaml:"launcher"`
	// RankEnv lists variables, in order of preference, that hold the rank
	// number (0-based) inside a launched process; staging uses it to pick
	// the node's share of shards. Empty: the engine's default.
	RankEnv []string `yaml:"rank_env"`
	Warning Warning  `yaml:"warning"`
	// Directives are extra lines for the job script header, written without
	// the engine's prefix ("--constraint=gpu" for Slurm, "-l place=scatter"
	// for PBS, "-R span[ptile=6]" for LSF).
	Directives []string `yaml:"directives"`
	// StateDir is where the local engine keeps its job records ("" = a
	// directory under the system's temporary directory).
	StateDir string `yaml:"state_dir"`

	file  string
	lines map[string]int
}

// Node is the shape of one compute node.
type Node struct {
	Cores        int  `yaml:"cores"`
	Accelerators int  `yaml:"accelerators"`
	Memory       Size `yaml:"memory"`
	// AcceleratorPeakTFLOPS is one accelerator's peak rate, in 10^12
	// floating-point operations per second, at the precision training
	// uses; the cost plan multiplies it by an expected efficiency.
	AcceleratorPeakTFLOPS float64 `yaml:"accelerator_peak_tflops"`
	Scratch               Scratch `yaml:"scratch"`
}

// Scratch is node-local storage that training data is staged to.
type Scratch struct {
	// Path may start with a variable the site sets per job, e.g.
	// "$TMPDIR/squall" or "/local/${SLURM_JOB_ID}"; only ${NAME} or $NAME
	// references are expanded, nothing else.
	Path string `yaml:"path"`
	Size Size   `yaml:"size"`
}

// Warning asks the engine to signal the job some time before its walltime
// so the trainer can write a checkpoint.
type Warning struct {
	Signal string   `yaml:"signal"` // USR1, USR2, TERM, INT, HUP, URG
	Lead   Duration `yaml:"lead"`
}

// Default returns a profile with every optional field at its default; the
// engine and the walltime are left for the file to give.
func Default() *Profile {
	return &Profile{
		Node:    Node{Cores: 1},
		Warning: Warning{Signal: "USR1", Lead: Duration(5 * time.Minute)},
	}
}

// Load reads, decodes and validates a profile file.
func Load(path string) (*Profile, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("site profile: %w", err)
	}
	p := Default()
	if err := p.Decode(path, data); err != nil {
		return nil, err
	}
	if err := p.Validate(); err != nil {
		return nil, err
	}
	return p, nil
}

// Decode reads YAML into p strictly: an unknown key is an error naming its
// line and the closest valid key. Fields the document leaves out keep their
// values in p (call it on Default()).
func (p *Profile) Decode(file string, data []byte) error {
	p.file = file
	p.lines = map[string]int{}
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		return fmt.Errorf("%s: %w", file, err)
	}
	if len(doc.Content) == 0 {
		return &FieldError{File: file, Field: "engine", Msg: "profile is empty",
			Hint: "a profile needs at least engine: and walltime:"}
	}
	if err := checkKeys(file, &doc, reflect.TypeOf(p), "", p.lines); err != nil {
		return err
	}
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	if err := dec.Decode(p); err != nil {
		return fmt.Errorf("%s: %w", file, err)
	}
	return nil
}

// Line returns the line of a key path in the profile file, 0 when unknown.
func (p *Profile) Line(field string) int { return p.lines[field] }

// File is the path the profile was decoded from.
func (p *Profile) File() string { return p.file }

func (p *Profile) fieldErr(field, value, msg, hint string) *FieldError {
	return &FieldError{File: p.file, Line: p.lines[field], Field: field, Value: value, Msg: msg, Hint: hint}
}

var (
	// nameRE is what we accept for partitions, queues and accounts: it is
	// safe unquoted in every engine's directive grammar and on a command
	// line, and covers every real partition name we know of (letters,
	// digits, _ . - + @ :, not starting with -).
	nameRE = regexp.MustCompile(`^[A-Za-z0-9_.+@:][A-Za-z0-9_.+@:-]{0,127}$`)
	// envNameRE is a POSIX shell variable name.
	envNameRE = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)
)

// Signals lists the warning signals a profile may name: ones a trainer can
// catch, that every engine here can deliver, and that bash can trap.
var Signals = []string{"USR1", "USR2", "TERM", "INT", "HUP", "URG"}

// LauncherPlaceholders are the words a launcher template may contain.
var LauncherPlaceholders = []string{"nodes", "ranks", "ranks_per_node", "cores_per_rank", "accelerators_per_rank"}

// Validate checks every field, fills engine defaults (launcher, rank
// variables), and returns all problems found, each naming the field, the
// value and a hint.
func (p *Profile) Validate() error {
	var errs []error
	add := func(e *FieldError) { errs = append(errs, e) }
	switch p.Engine {
	case "slurm", "pbs", "lsf", "local":
	case "":
		add(p.fieldErr("engine", "", "is required", "one of: "+strings.Join(Engines, ", ")))
	default:
		h := "one of: " + strings.Join(Engines, ", ")
		if near := closest(p.Engine, Engines); near != "" {
			h = fmt.Sprintf("did you mean %q? %s", near, h)
		}
		add(p.fieldErr("engine", p.Engine, "unknown engine", h))
	}
	for _, f := range []struct{ name, v string }{{"partition", p.Partition}, {"account", p.Account}} {
		if f.v != "" && !nameRE.MatchString(f.v) {
			add(p.fieldErr(f.name, f.v, "not a valid name",
				"letters, digits and _ . - + @ : only, not starting with -"))
		}
	}
	if p.Node.Cores < 1 {
		add(p.fieldErr("node.cores", fmt.Sprint(p.Node.Cores), "must be at least 1", "cores per node"))
	}
	if p.Node.Accelerators < 0 {
		add(p.fieldErr("node.accelerators", fmt.Sprint(p.Node.Accelerators), "must be 0 or more", "accelerators (GPUs) per node"))
	}
	if p.Node.Memory < 0 {
		add(p.fieldErr("node.memory", p.Node.Memory.String(), "must not be negative", "e.g. 512GB"))
	}
	if p.Node.AcceleratorPeakTFLOPS < 0 {
		add(p.fieldErr("node.accelerator_peak_tflops", fmt.Sprint(p.Node.AcceleratorPeakTFLOPS), "must not be negative", "peak 10^12 FLOP/s of one accelerator"))
	}
	if p.MaxNodes < 0 {
		add(p.fieldErr("max_nodes", fmt.Sprint(p.MaxNodes), "must not be negative", "0 means no limit"))
	}
	if s := p.Node.Scratch; s.Path != "" {
		if err := checkTemplatePath(s.Path); err != nil {
			add(p.fieldErr("node.scratch.path", s.Path, err.Error(), `an absolute path, or one starting with a variable such as "$TMPDIR/squall"`))
		}
		if s.Size <= 0 {
			add(p.fieldErr("node.scratch.size", s.Size.String(), "must be given when node.scratch.path is", "node-local capacity, e.g. 800GB"))
		}
	}
	if p.Walltime <= 0 {
		add(p.fieldErr("walltime", p.Walltime.String(), "is required and must be positive", "the site's longest job, e.g. 24h or 12:00:00"))
	}
	if !contains(Signals, p.Warning.Signal) {
		add(p.fieldErr("warning.signal", p.Warning.Signal, "not a signal we can forward", "one of: "+strings.Join(Signals, ", ")+" (no SIG prefix)"))
	}
	if p.Warning.Lead < 0 || (p.Walltime > 0 && p.Warning.Lead >= p.Walltime) {
		add(p.fieldErr("warning.lead", p.Warning.Lead.String(), "must be at least 0 and shorter than walltime", "time the trainer needs to write a checkpoint, e.g. 10m"))
	}
	for i, l := range p.Setup {
		f := fmt.Sprintf("setup[%d]", i)
		if strings.ContainsAny(l, "\n\r\x00") {
			add(p.fieldErr(f, l, "contains a line break or NUL", "one command per list item"))
		}
	}
	for i, d := range p.Directives {
		f := fmt.Sprintf("directives[%d]", i)
		if strings.ContainsAny(d, "\n\r\x00") || strings.TrimSpace(d) == "" {
			add(p.fieldErr(f, d, "must be one non-empty line", "one directive per list item, without its #SBATCH/#PBS/#BSUB prefix"))
		} else if strings.HasPrefix(strings.TrimSpace(d), "#") {
			add(p.fieldErr(f, d, "starts with #", "leave out the prefix; the engine adds it"))
		}
	}
	for i, v := range p.RankEnv {
		if !envNameRE.MatchString(v) {
			add(p.fieldErr(fmt.Sprintf("rank_env[%d]", i), v, "not a variable name", "e.g. SLURM_PROCID"))
		}
	}
	for i, w := range p.Launcher {
		f := fmt.Sprintf("launcher[%d]", i)
		if strings.ContainsAny(w, "\n\r\x00") {
			add(p.fieldErr(f, w, "contains a line break or NUL", "one word per list item"))
			continue
		}
		if err := checkPlaceholders(w, LauncherPlaceholders); err != nil {
			add(p.fieldErr(f, w, err.Error(), "placeholders: {"+strings.Join(LauncherPlaceholders, "}, {")+"}"))
		}
	}
	if p.StateDir != "" && !strings.HasPrefix(p.StateDir, "/") {
		add(p.fieldErr("state_dir", p.StateDir, "must be an absolute path", ""))
	}
	if len(errs) > 0 {
		return errors.Join(errs...)
	}
	if len(p.Launcher) == 0 {
		p.Launcher = DefaultLauncher(p.Engine)
	}
	if len(p.RankEnv) == 0 {
		p.RankEnv = DefaultRankEnv(p.Engine)
	}
	return nil
}

// DefaultLauncher is the launcher an engine gets when the profile gives
// none. Slurm's srun knows the allocation; for PBS and LSF an MPI
// launcher with explicit counts is the common practice; the local engine
// uses the script's own loop (an empty launcher).
func DefaultLauncher(engine string) []string {
	switch engine {
	case "slurm":
		return []string{"srun", "--nodes={nodes}", "--ntasks={ranks}", "--ntasks-per-node={ranks_per_node}", "--cpus-per-task={cores_per_rank}"}
	case "pbs":
		return []string{"mpiexec", "-n", "{ranks}", "-ppn", "{ranks_per_node}"}
	case "lsf":
		return []string{"mpirun", "-n", "{ranks}"}
	}
	return nil
}

// DefaultRankEnv is where launched processes find their rank number, by
// engine: srun sets SLURM_PROCID; MPICH-family and Open MPI launchers set
// PMI_RANK and OMPI_COMM_WORLD_RANK; the local loop sets SQUALL_RANK.
func DefaultRankEnv(engine string) []string {
	switch engine {
	case "slurm":
		return []string{"SLURM_PROCID"}
	case "pbs", "lsf":
		return []string{"PMI_RANK", "OMPI_COMM_WORLD_RANK"}
	}
	return []string{"SQUALL_RANK"}
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

var placeholderRE = regexp.MustCompile(`\{([^{}]*)\}`)

// checkPlaceholders reports a {name} not in valid.
func checkPlaceholders(word string, valid []string) error {
	for _, m := range placeholderRE.FindAllStringSubmatch(word, -1) {
		if !contains(valid, m[1]) {
			msg := fmt.Sprintf("unknown placeholder {%s}", m[1])
			if near := closest(m[1], valid); near != "" {
				msg += fmt.Sprintf(", did you mean {%s}?", near)
			}
			return errors.New(msg)
		}
	}
	return nil
}

// checkTemplatePath accepts an absolute path or one that starts with a
// variable reference; the rest must be free of line breaks.
func checkTemplatePath(p string) error {
	if strings.ContainsAny(p, "\n\r\x00") {
		return errors.New("contains a line break or NUL")
	}
	if strings.HasPrefix(p, "/") {
		return nil
	}
	if m := leadingVarRE.FindString(p); m != "" {
		return nil
	}
	return errors.New("must be absolute or start with $NAME or ${NAME}")
}

var leadingVarRE = regexp.MustCompile(`^\$(\{[A-Za-z_][A-Za-z0-9_]*\}|[A-Za-z_][A-Za-z0-9_]*)`)

// Summary is a one-line description of the site for logs and plans.
func (p *Profile) Summary() string {
	parts := []string{p.Engine}
	if p.Partition != "" {
		parts = append(parts, "partition "+p.Partition)
	}
	parts = append(parts, fmt.Sprintf("%d cores", p.Node.Cores))
	if p.Node.Accelerators > 0 {
		parts = append(parts, fmt.Sprintf("%d accelerators", p.Node.Accelerators))
	}
	parts = append(parts, "walltime "+p.Walltime.Clock())
	return strings.Join(parts, ", ")
}

// sortedKeys is used wherever a map reaches output.
func sortedKeys[V any](m map[string]V) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}
