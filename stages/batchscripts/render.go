package batchscripts

import (
	"fmt"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/scheduler"
)

type renderer struct {
	prof                               *scheduler.Profile
	eng                                scheduler.Engine
	set                                pipeline.Values
	camp                               string
	nodes, acc                         int
	shardDir, manifest, stats, weights string
}

func (r *renderer) abs(p string) string {
	if filepath.IsAbs(p) {
		return filepath.Clean(p)
	}
	return filepath.Join(r.camp, p)
}

// launch renders the profile's launcher for ranks over the job's nodes,
// or the script's own loop when the profile has no launcher (local).
func (r *renderer) launch(nodes, perNode, cores int) (string, error) {
	if len(r.prof.Launcher) == 0 {
		return "squall_launch_local " + strconv.Itoa(nodes*perNode), nil
	}
	acc := 0
	if perNode > 0 {
		acc = r.acc / perNode
	}
	return scheduler.Templates(r.prof.Launcher, map[string]string{
		"nodes": strconv.Itoa(nodes), "ranks": strconv.Itoa(nodes * perNode),
		"ranks_per_node": strconv.Itoa(perNode), "cores_per_rank": strconv.Itoa(cores),
		"accelerators_per_rank": strconv.Itoa(acc),
	})
}

const localLauncher = `# squall_launch_local N CMD...: start N ranks of CMD here, SQUALL_RANK=0..N-1,
# pass the warning signal on to each, and fail if any rank fails.
squall_launch_local() {
	local n=$1 i rc=0
	shift
	local pids=()
	for ((i = 0; i < n; i++)); do
		SQUALL_RANK=$i "$@" &
		pids+=("$!")
	done
	trap 'kill -s %[1]s "${pids[@]}" 2>/dev/null || true' %[1]s
	for i in "${pids[@]}"; do
		wait "$i" || rc=$?
	done
	return "$rc"
}
`

func (r *renderer) train() ([]byte, error) {
	cores := r.prof.Node.Cores / r.acc
	stageLaunch, err := r.launch(r.nodes, 1, r.prof.Node.Cores)
	if err != nil {
		return nil, err
	}
	trainLaunch, err := r.launch(r.nodes, r.acc, max(cores, 1))
	if err != nil {
		return nil, err
	}
	vars := map[string]string{
		"manifest": `"${SQUALL_MANIFEST}"`, "stats": `"${SQUALL_STATS}"`, "weights": `"${SQUALL_CLASS_WEIGHTS}"`,
		"shards": `"${SQUALL_SHARDS}"`, "checkpoints": `"${SQUALL_CHECKPOINTS}"`, "rank_env": `"${SQUALL_RANK_ENV}"`,
	}
	cmd := r.set.Strings("train_command")
	if len(cmd) == 0 {
		return nil, fmt.Errorf("batch-scripts: setting train_command is empty (hint: the team's training command, one word per item)")
	}
	trainCmd, err := scheduler.Templates(cmd, vars)
	if err != nil {
		return nil, fmt.Errorf("batch-scripts: setting train_command: %w", err)
	}
	var b strings.Builder
	w := func(format string, args ...any) { fmt.Fprintf(&b, format+"\n", args...) }
	if len(r.prof.Launcher) == 0 {
		fmt.Fprintf(&b, localLauncher, r.prof.Warning.Signal)
		w("")
	}
	w("# One segment of the training chain: stage this job's shards to node-local")
	w("# storage (verified), then train, resuming from the newest checkpoint.")
	w(`mkdir -p -- "$SQUALL_CHECKPOINTS" logs`)
	w(`if [[ -e "$SQUALL_CHECKPOINTS/TRAINING_DONE" ]]; then`)
	w(`	echo "squall: training finished in an earlier segment; nothing to do"`)
	w(`	exit 0`)
	w(`fi`)
	w(`SQUALL_SHARDS=%s/squall-shards-"$SQUALL_JOB_ID"`, scheduler.PathWord(strings.TrimRight(r.prof.Node.Scratch.Path, "/")))
	w(`export SQUALL_SHARDS`)
	w(`echo "squall: staging shards to $SQUALL_SHARDS on %d node(s)"`, r.nodes)
	w(`squall_run %s bash "$SQUALL_SUBMIT_DIR/stage-node.sh"`, stageLaunch)
	w(`echo "squall: training on %d node(s) x %d rank(s)"`, r.nodes, r.acc)
	w(`squall_run %s %s`, trainLaunch, trainCmd)
	w(`if ((SQUALL_WARNED)); then`)
	w(`	echo "squall: stopped at the warning signal after a checkpoint; the next segment continues"`)
	w(`	exit 0`)
	w(`fi`)
	w(`touch -- "$SQUALL_CHECKPOINTS/TRAINING_DONE"`)
	work := r.abs(r.set.String("work_dir"))
	spec := &scheduler.JobSpec{
		Name: "squall-train", Dir: work, Log: filepath.Join(work, "logs", "train-{job}.out"),
		Nodes: r.nodes, RanksPerNode: r.acc, CoresPerRank: max(cores, 1), AcceleratorsPerNode: accOrZero(r.prof, r.acc),
		Warning: true, Exclusive: r.prof.Engine != "local", Body: b.String(),
		Env: []scheduler.EnvVar{
			{Name: "SQUALL_MANIFEST", Value: r.manifest}, {Name: "SQUALL_STATS", Value: r.stats},
			{Name: "SQUALL_CLASS_WEIGHTS", Value: r.weights}, {Name: "SQUALL_SHARD_SOURCE", Value: r.shardDir},
			{Name: "SQUALL_CHECKPOINTS", Value: filepath.Join(work, "checkpoints")},
			{Name: "SQUALL_RANK_ENV", Value: strings.Join(r.prof.RankEnv, " ")},
			{Name: "SQUALL_STAGE_PARALLEL", Value: strconv.Itoa(r.set.Int("stage_parallel"))},
		},
	}
	return r.eng.Render(spec)
}

func accOrZero(p *scheduler.Profile, acc int) int {
	if p.Node.Accelerators == 0 {
		return 0
	}
	return acc
}

// stageNode is run once per node by the launcher: it finds its node
// number from the rank variables, copies its shards in parallel, and
// verifies them with sha256sum. Already staged and verified: nothing to do.
func (r *renderer) stageNode() []byte {
	return []byte(`#!/bin/bash
# Stage this node's shards to node-local storage and verify them.
# Run once per node by the training job; reads SQUALL_SHARD_SOURCE,
# SQUALL_SHARDS, SQUALL_SUBMIT_DIR, SQUALL_RANK_ENV, SQUALL_STAGE_PARALLEL.
set -euo pipefail
node=
read -ra rank_vars <<<"$SQUALL_RANK_ENV"
for v in "${rank_vars[@]}"; do
	if [[ -n ${!v:-} ]]; then
		node=${!v}
		break
	fi
done
if [[ ! $node =~ ^[0-9]+$ ]]; then
	echo "stage-node: no rank number in any of: $SQUALL_RANK_ENV" >&2
	exit 1
fi
list=$(printf '%s/stage/node-%04d.sha256' "$SQUALL_SUBMIT_DIR" "$((10#$node))")
mkdir -p -- "$SQUALL_SHARDS"
cd -- "$SQUALL_SHARDS"
if sha256sum --quiet --strict -c -- "$list" >/dev/null 2>&1; then
	echo "stage-node $node: shards already staged and verified"
	exit 0
fi
# Shard names were checked when this list was written: letters, digits, _ . - only.
cut -c67- -- "$list" | xargs -r -P "$SQUALL_STAGE_PARALLEL" -I{} cp -f -- "$SQUALL_SHARD_SOURCE/{}" "{}"
sha256sum --quiet --strict -c -- "$list"
echo "stage-node $node: $(wc -l <"$list") shard(s) staged and verified"
`)
}

// inferenceTasks lists (scenario, block, input, output) per instance of
// the infer_from stage, in plan order.
func (r *renderer) inferenceTasks(job *pipeline.Job) ([][4]string, error) {
	from := r.set.String("infer_from")
	pred := r.abs(r.set.String("predictions_dir"))
	var out [][4]string
	for _, in := range job.InputsFrom(from) {
		if in.Block == "" {
			continue
		}
		input := firstFile(in.Files, ".nc")
		if input == "" {
			return nil, fmt.Errorf("batch-scripts: setting infer_from: stage %s instance %s/%s has no .nc file", from, in.Scenario, in.Block)
		}
		for _, v := range []string{in.Scenario, in.Block} {
			if !safeNameRE.MatchString(v) {
				return nil, fmt.Errorf("batch-scripts: scenario or block name %q: only letters, digits, _ . - are accepted", v)
			}
		}
		output := filepath.Join(pred, in.Scenario, in.Block, "mask.nc")
		for _, p := range []string{input, output} {
			if strings.ContainsAny(p, "\t\n\r") {
				return nil, fmt.Errorf("batch-scripts: path %q contains a tab or line break", p)
			}
		}
		out = append(out, [4]string{in.Scenario, in.Block, input, output})
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("batch-scripts: setting infer_from: no per-block inputs from stage %q (hint: add it to this stage's inputs)", from)
	}
	return out, nil
}

func (r *renderer) infer(n int) ([]byte, error) {
	vars := map[string]string{
		"input": `"${SQUALL_INPUT}"`, "output": `"${SQUALL_OUTPUT_PARTIAL}"`, "stats": `"${SQUALL_STATS}"`,
		"checkpoints": `"${SQUALL_CHECKPOINTS}"`, "scenario": `"${SQUALL_SCENARIO}"`, "block": `"${SQUALL_BLOCK}"`,
	}
	cmd, err := scheduler.Templates(r.set.Strings("infer_command"), vars)
	if err != nil {
		return nil, fmt.Errorf("batch-scripts: setting infer_command: %w", err)
	}
	launch, err := r.launch(1, 1, r.prof.Node.Cores)
	if err != nil {
		return nil, err
	}
	var b strings.Builder
	w := func(format string, args ...any) { fmt.Fprintf(&b, format+"\n", args...) }
	if len(r.prof.Launcher) == 0 {
		fmt.Fprintf(&b, localLauncher, r.prof.Warning.Signal)
		w("")
	}
	w(`# One task of the inference array: line SQUALL_ARRAY_INDEX of inference-tasks.tsv`)
	w(`# (scenario, block, input, output). The mask is written beside its final`)
	w(`# name and renamed when complete; a task whose mask exists does nothing.`)
	w(`mapfile -t squall_tasks <"$SQUALL_SUBMIT_DIR/inference-tasks.tsv"`)
	w(`IFS=$'\t' read -r SQUALL_SCENARIO SQUALL_BLOCK SQUALL_INPUT SQUALL_OUTPUT <<<"${squall_tasks[$SQUALL_ARRAY_INDEX]}"`)
	w(`SQUALL_OUTPUT_PARTIAL="${SQUALL_OUTPUT%%.nc}.partial-${SQUALL_JOB_ID}.nc"`)
	w(`export SQUALL_SCENARIO SQUALL_BLOCK SQUALL_INPUT SQUALL_OUTPUT SQUALL_OUTPUT_PARTIAL`)
	w(`if [[ -e $SQUALL_OUTPUT ]]; then`)
	w(`	echo "squall: $SQUALL_OUTPUT exists; nothing to do"`)
	w(`	exit 0`)
	w(`fi`)
	w(`mkdir -p -- "$(dirname -- "$SQUALL_OUTPUT")"`)
	w(`squall_run %s %s`, launch, cmd)
	w(`mv -f -- "$SQUALL_OUTPUT_PARTIAL" "$SQUALL_OUTPUT"`)
	work := r.abs(r.set.String("work_dir"))
	spec := &scheduler.JobSpec{
		Name: "squall-infer", Dir: work, Log: filepath.Join(work, "logs", "infer-{job}-{index}.out"),
		Nodes: 1, RanksPerNode: 1, CoresPerRank: r.prof.Node.Cores, AcceleratorsPerNode: accOrZero(r.prof, 1),
		Array: n, Body: b.String(),
		Env: []scheduler.EnvVar{
			{Name: "SQUALL_STATS", Value: r.stats},
			{Name: "SQUALL_CHECKPOINTS", Value: filepath.Join(work, "checkpoints")},
		},
	}
	return r.eng.Render(spec)
}

// submit writes the script a person runs at the site: it submits the K
// training segments as an afterok chain, then the inference array after
// the last one. Running it again is safe: finished work is skipped.
func (r *renderer) submit(ext string, segments int, infer bool) []byte {
	var b strings.Builder
	w := func(format string, args ...any) { fmt.Fprintf(&b, format+"\n", args...) }
	work := r.abs(r.set.String("work_dir"))
	w("#!/bin/bash")
	w("# Submit %d training segment(s) as a chain (each starts after the one before", segments)
	w("# succeeded and resumes from the newest checkpoint)%s.", map[bool]string{true: ", then the inference array", false: ""}[infer])
	w("# Engine: %s. Safe to run again: finished work is skipped by the jobs.", r.prof.Engine)
	w("set -euo pipefail")
	w(`cd -- "$(dirname -- "${BASH_SOURCE[0]}")"`)
	w("mkdir -p -- %s", scheduler.Quote(filepath.Join(work, "logs")))
	w("after=")
	w("script=train%s", ext)
	w("for ((segment = 1; segment <= %d; segment++)); do", segments)
	for _, l := range strings.Split(r.eng.SubmitShell("script", "after", "id"), "\n") {
		w("\t%s", l)
	}
	w(`	echo "training segment $segment: job $id"`)
	w("\tafter=$id")
	w("done")
	if infer {
		w("script=infer%s", ext)
		w(r.eng.SubmitShell("script", "after", "id"))
		w(`echo "inference array: job $id"`)
	}
	return []byte(b.String())
}
