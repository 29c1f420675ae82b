package batchscripts

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"time"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/scheduler/all"
	"github.com/squall-climate/squall/stages/shard"
	"github.com/zeebo/blake3"
)

// Kind is the batch-scripts stage kind.
type Kind struct{}

var _ pipeline.Kind = Kind{}

func (Kind) Name() string               { return "batch-scripts" }
func (Kind) Version() int               { return 1 }
func (Kind) Fan() pipeline.Fan          { return pipeline.FanCampaign }
func (Kind) CampaignSections() []string { return []string{pipeline.SectionScenarios} }

func (Kind) Doc() string {
	return "Writes training and inference job scripts for the site profile given by the profile setting " +
		"(Slurm, PBS, LSF or a local shell): a chain of training segments that stage each node's shards to " +
		"node-local storage with digest checks and resume from checkpoints, an inference job array over " +
		"scenario x block, a submit script, and a cost and staging plan (plan.json, plan.txt)."
}

func (Kind) Settings() []pipeline.Setting {
	return []pipeline.Setting{
		{Name: "profile", Type: pipeline.TypeFiles, Doc: "site profile YAML (engine, node shape, launcher); switching it re-emits every script"},
		{Name: "train_command", Type: pipeline.TypeStrings, Doc: "the team's training command, one word per item; placeholders {manifest} {stats} {weights} {shards} {checkpoints} {rank_env}"},
		{Name: "infer_command", Type: pipeline.TypeStrings, Default: []string{}, Doc: "the team's inference command; placeholders {input} {output} {stats} {checkpoints} {scenario} {block}; empty: no inference scripts"},
		{Name: "infer_from", Type: pipeline.TypeString, Default: "normalize", Doc: "stage whose per-block outputs inference reads (first .nc file of each instance)"},
		{Name: "nodes", Type: pipeline.TypeInt, Default: 1, Min: pipeline.Bound(1), Doc: "training nodes"},
		{Name: "accelerators_per_node", Type: pipeline.TypeInt, Default: 0, Min: pipeline.Bound(0), Doc: "ranks per node, one per accelerator; 0: all the profile's node has (1 on a node without accelerators)"},
		{Name: "epochs", Type: pipeline.TypeFloat, Default: 10.0, Min: pipeline.Bound(0), Doc: "passes over the training samples, for the plan"},
		{Name: "flop_per_sample", Type: pipeline.TypeFloat, Unit: "FLOP", Default: 14.4e12, Min: pipeline.Bound(0), Doc: "floating-point operations of one training step per sample; default: a large segmentation network's cost, a fact of the trade"},
		{Name: "efficiency", Type: pipeline.TypeFloat, Default: 0.33, Min: pipeline.Bound(0.001), Max: pipeline.Bound(1), Doc: "fraction of peak one accelerator sustains; default about a third, a fact of the trade at scale"},
		{Name: "scaling_efficiency", Type: pipeline.TypeFloat, Default: 0.9, Min: pipeline.Bound(0.001), Max: pipeline.Bound(1), Doc: "fraction of throughput kept across all ranks (common practice guess)"},
		{Name: "segments", Type: pipeline.TypeInt, Default: 0, Min: pipeline.Bound(0), Doc: "training job segments in the chain; 0: as many as the plan needs"},
		{Name: "too_big", Type: pipeline.TypeString, Default: "refuse", Choices: []string{"refuse", "more-nodes"}, Doc: "when a node's shards exceed its node-local storage: stop with an error, or use as many nodes as needed"},
		{Name: "scratch_fill", Type: pipeline.TypeFloat, Default: 0.9, Min: pipeline.Bound(0.01), Max: pipeline.Bound(1), Doc: "fraction of node-local storage staging may use"},
		{Name: "stage_parallel", Type: pipeline.TypeInt, Default: 8, Min: pipeline.Bound(1), Doc: "concurrent copies per node while staging"},
		{Name: "work_dir", Type: pipeline.TypeString, Default: "runs/train", Doc: "directory for checkpoints and logs, relative to the campaign directory"},
		{Name: "predictions_dir", Type: pipeline.TypeString, Default: "predictions", Doc: "predicted masks go to DIR/SCENARIO/BLOCK/mask.nc, relative to the campaign directory"},
		{Name: "stats_file", Type: pipeline.TypeString, Default: "stats.json", Doc: "file name of the normalization statistics among the inputs"},
	}
}

// Manifest is the part of the shard stage's manifest.json we read.
type Manifest struct {
	Shards []ShardEntry `json:"shards"`
}

// ShardEntry is one shard file.
type ShardEntry struct {
	File    string `json:"file"`          // relative to the manifest's directory
	Role    string `json:"set,omitempty"` // train, validate, test
	Samples int64  `json:"samples"`
	Bytes   int64  `json:"bytes"`
	Digest  string `json:"blake3,omitempty"`
}

// SampleBytes is the stored size of one sample of float values.
func SampleBytes(lon, lat, channels, bytesPer int) float64 {
	return float64(lon) * float64(lat) * float64(channels) * float64(bytesPer)
}

var (
	safeNameRE = regexp.MustCompile(`^[A-Za-z0-9_][A-Za-z0-9_.-]*$`)
)

func fail(setting, msg string, args ...any) error {
	return fmt.Errorf("batch-scripts: setting %s: %s", setting, fmt.Sprintf(msg, args...))
}

// Run writes the scripts and the plan.
func (k Kind) Run(ctx context.Context, job *pipeline.Job) error {
	s := job.Settings
	// --- profile
	var profilePath string
	for _, in := range job.InputsFrom("profile") {
		profilePath = firstFile(in.Files, "")
	}
	if profilePath == "" {
		return fail("profile", "no site profile file matched; give the path of a site profile YAML")
	}
	prof, eng, err := all.Load(profilePath)
	if err != nil {
		return fmt.Errorf("batch-scripts: %w", err)
	}
	// --- manifest, stats, weights
	var manPath, statsPath, weightsPath string
	for _, in := range job.Inputs {
		for _, f := range in.Files {
			switch filepath.Base(f) {
			case "manifest.json":
				manPath = f
			case s.String("stats_file"):
				statsPath = f
			case "weights.json":
				weightsPath = f
			}
		}
	}
	if manPath == "" {
		return fmt.Errorf("batch-scripts: no manifest.json among the inputs (hint: add the shard stage to this stage's inputs)")
	}
	var man Manifest
	data, err := os.ReadFile(manPath)
	if err != nil {
		return fmt.Errorf("batch-scripts: %w", err)
	}
	if err := json.Unmarshal(data, &man); err != nil {
		return fmt.Errorf("batch-scripts: %s: %w", manPath, err)
	}
	var train []int
	var samples int64
	var sampleBytes float64
	for i, sh := range man.Shards {
		if !safeNameRE.MatchString(sh.File) {
			return fmt.Errorf("batch-scripts: %s: shard %d file %q: only letters, digits, _ . - are accepted in shard names", manPath, i, sh.File)
		}
		if sh.Role == "test" {
			continue
		}
		train = append(train, i)
		if sh.Role != "validate" {
			samples += sh.Samples
		}
		if sh.Samples > 0 && sampleBytes == 0 {
			sampleBytes = float64(sh.Bytes) / float64(sh.Samples)
		}
	}
	if weightsPath == "" {
		weightsPath = manPath // the shard manifest carries loss_weights
	}
	if len(train) == 0 {
		return fmt.Errorf("batch-scripts: %s lists no training shards", manPath)
	}
	// --- shape
	nodes := s.Int("nodes")
	acc := s.Int("accelerators_per_node")
	if acc == 0 {
		acc = max(prof.Node.Accelerators, 1)
	}
	if acc > max(prof.Node.Accelerators, 1) {
		return fail("accelerators_per_node", "%d exceeds the profile's node.accelerators %d (%s)", acc, prof.Node.Accelerators, profilePath)
	}
	segWall := time.Duration(prof.Walltime)
	usable := segWall - time.Duration(prof.Warning.Lead)
	shareOf := func(nodes int) ([][]int, []int64) {
		ranks := nodes * acc
		// The shard stage's own balancing rule, so the assignment equals the
		// manifest's whenever its rank count matches this job's.
		sizes := make([]int64, len(train))
		for j, i := range train {
			sizes[j] = man.Shards[i].Bytes
		}
		byRank := shard.BalanceShards(sizes, ranks)
		for r := range byRank {
			for j := range byRank[r] {
				byRank[r][j] = train[byRank[r][j]]
			}
		}
		perNode := make([][]int, nodes)
		bytes := make([]int64, nodes)
		for r, idx := range byRank {
			n := r / acc
			perNode[n] = append(perNode[n], idx...)
			for _, i := range idx {
				bytes[n] += man.Shards[i].Bytes
			}
		}
		for n := range perNode {
			sort.Ints(perNode[n])
		}
		return perNode, bytes
	}
	perNode, stageBytes := shareOf(nodes)
	in := PlanInput{Site: prof.Summary(), Nodes: nodes, AcceleratorsPerNode: acc, Samples: samples,
		SampleBytes: sampleBytes, FLOPPerSample: s.Float("flop_per_sample"),
		PeakFLOPS: prof.Node.AcceleratorPeakTFLOPS * 1e12, Efficiency: s.Float("efficiency"),
		ScalingEfficiency: s.Float("scaling_efficiency"), Epochs: s.Float("epochs"),
		SegmentSeconds: usable.Seconds(), StageBytesPerNode: stageBytes,
		ScratchBytes: int64(prof.Node.Scratch.Size), ScratchFill: s.Float("scratch_fill")}
	plan := ComputePlan(in)
	if prof.Node.Scratch.Path == "" {
		return fmt.Errorf("batch-scripts: site profile %s: node.scratch.path is not set (hint: give the node-local storage path and size)", profilePath)
	}
	if !plan.Fits {
		if s.String("too_big") == "refuse" {
			return fail("nodes", "each node must stage up to %s but %s of node-local storage is usable (node.scratch.size %s x scratch_fill %g); use at least %d nodes, or set too_big: more-nodes",
				bytesText(plan.MaxStageBytes), bytesText(plan.ScratchUsable), prof.Node.Scratch.Size, in.ScratchFill, plan.MinNodes)
		}
		for nodes = plan.MinNodes; ; nodes++ {
			perNode, stageBytes = shareOf(nodes)
			in.Nodes, in.StageBytesPerNode = nodes, stageBytes
			plan = ComputePlan(in)
			if plan.Fits {
				break
			}
		}
		job.Logf("batch-scripts: using %d nodes so that each node's shards fit its node-local storage", nodes)
	}
	if prof.MaxNodes > 0 && nodes > prof.MaxNodes {
		return fail("nodes", "%d nodes exceed the profile's max_nodes %d", nodes, prof.MaxNodes)
	}
	segments := s.Int("segments")
	if segments == 0 {
		segments = plan.Segments
	}
	plan.Segments = segments

	// --- stage lists with sha256 digests (coreutils sha256sum on every node)
	shardDir := filepath.Dir(manPath)
	sums := make(map[int]string)
	for _, list := range perNode {
		for _, i := range list {
			if _, ok := sums[i]; ok {
				continue
			}
			sum, err := digests(filepath.Join(shardDir, man.Shards[i].File), man.Shards[i].Digest)
			if err != nil {
				return fmt.Errorf("batch-scripts: %w", err)
			}
			sums[i] = sum
		}
	}
	out := job.OutDir
	if err := os.MkdirAll(filepath.Join(out, "stage"), 0o755); err != nil {
		return err
	}
	for n, list := range perNode {
		var b strings.Builder
		for _, i := range list {
			fmt.Fprintf(&b, "%s  %s\n", sums[i], man.Shards[i].File)
		}
		if err := os.WriteFile(filepath.Join(out, "stage", fmt.Sprintf("node-%04d.sha256", n)), []byte(b.String()), 0o644); err != nil {
			return err
		}
	}

	r := &renderer{prof: prof, eng: eng, set: s, camp: job.Campaign.Dir, nodes: nodes, acc: acc,
		shardDir: shardDir, manifest: manPath, stats: statsPath, weights: weightsPath}
	files := map[string][]byte{}
	ext := extension(prof.Engine)
	train1, err := r.train()
	if err != nil {
		return err
	}
	files["train"+ext] = train1
	files["stage-node.sh"] = r.stageNode()
	inferCmd := s.Strings("infer_command")
	var tasks [][4]string
	if len(inferCmd) > 0 {
		tasks, err = r.inferenceTasks(job)
		if err != nil {
			return err
		}
		var tb strings.Builder
		for _, t := range tasks {
			tb.WriteString(strings.Join(t[:], "\t") + "\n")
		}
		files["inference-tasks.tsv"] = []byte(tb.String())
		inf, err := r.infer(len(tasks))
		if err != nil {
			return err
		}
		files["infer"+ext] = inf
	}
	files["submit.sh"] = r.submit(ext, segments, len(inferCmd) > 0)
	pj, _ := json.MarshalIndent(plan, "", "  ")
	files["plan.json"] = append(pj, '\n')
	files["plan.txt"] = []byte(plan.Text())
	for name, data := range files {
		mode := os.FileMode(0o644)
		if strings.HasSuffix(name, ".sh") || name == "train"+ext || name == "infer"+ext {
			mode = 0o755
		}
		if err := os.WriteFile(filepath.Join(out, name), data, mode); err != nil {
			return err
		}
	}
	return nil
}

func firstFile(files []string, suffix string) string {
	for _, f := range files {
		if strings.HasSuffix(f, suffix) {
			return f
		}
	}
	return ""
}

// extension is the job script suffix by engine, as sites name them.
func extension(engine string) string {
	switch engine {
	case "slurm":
		return ".sbatch"
	case "pbs":
		return ".pbs"
	case "lsf":
		return ".lsf"
	}
	return ".job.sh"
}

// digests reads a shard once and returns its sha256 (for sha256sum -c on
// the nodes) after checking it against the manifest's digest, which may be
// blake3 (the project's hash) or sha256, with or without an "algo:" prefix.
func digests(path, want string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", fmt.Errorf("shard %s: %w", path, err)
	}
	defer f.Close()
	s2 := sha256.New()
	b3 := blake3.New()
	if _, err := io.Copy(io.MultiWriter(s2, b3), f); err != nil {
		return "", fmt.Errorf("shard %s: %w", path, err)
	}
	sum := hex.EncodeToString(s2.Sum(nil))
	if want != "" {
		w := want
		if i := strings.IndexByte(w, ':'); i >= 0 {
			w = w[i+1:]
		}
		if w != sum && w != hex.EncodeToString(b3.Sum(nil)) {
			return "", fmt.Errorf("shard %s: content does not match the manifest's digest %s (hint: rerun the shard stage)", path, want)
		}
	}
	return sum, nil
}
