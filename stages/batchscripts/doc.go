// Package batchscripts is the batch-scripts stage kind (FanCampaign): from
// the shard stage's manifest.json, the normalization statistics and a site
// profile (setting profile, a file pattern so the profile's content is in
// the cache key) it writes the jobs a team submits at its HPC site.
//
// Output files (in the instance's directory):
//
//	train.EXT            one training segment (EXT: .sbatch, .pbs, .lsf, .job.sh)
//	infer.EXT            inference job array, one task per scenario x block
//	inference-tasks.tsv  scenario, block, input, output (tab-separated), one line per task
//	stage-node.sh        run once per node: copy its shards to node-local storage, verify
//	stage/node-NNNN.sha256  each node's shards, in sha256sum -c format
//	submit.sh            submits K segments as an afterok chain, then the array
//	plan.json, plan.txt  cost and staging plan
//
// Training: N nodes x G ranks (one per accelerator). Each segment stages
// the node's shards (balanced with shard.BalanceShards, the shard stage's own rule, so it
// equals the manifest's assignment when the rank counts match) to
// node.scratch.path/squall-shards-JOBID in parallel, verifies them, then
// runs train_command through the profile's launcher with SQUALL_MANIFEST,
// SQUALL_STATS, SQUALL_CLASS_WEIGHTS (weights.json among the inputs, else
// the manifest, whose loss_weights key holds them), SQUALL_SHARDS and SQUALL_CHECKPOINTS
// set (also available as {manifest} {stats} {weights} {shards}
// {checkpoints} placeholders). The warning signal is forwarded to the
// trainer, which must write a checkpoint and exit 0; the next segment
// resumes. A trainer that exits 0 without the signal has finished:
// checkpoints/TRAINING_DONE makes later segments no-ops.
//
// Digests: nodes verify with sha256sum (coreutils, on every site). b3sum
// is packaged by Debian (bookworm) but is rarely on compute nodes, so
// while writing the lists we read each shard once, compute sha256 and
// blake3 together, and refuse a shard whose content matches neither form
// of the manifest's digest. Cost: one read of the staged shards.
//
// Inference writes predicted masks (the shared mask.nc format) to
// predictions_dir/SCENARIO/BLOCK/mask.nc, via a partial file renamed on
// success. Scripts write only below work_dir (checkpoints, logs), the
// node-local staging directory and predictions_dir, and delete nothing.
//
// The plan (see ComputePlan) is an estimate for budgeting, not a
// measurement; staging that does not fit node-local storage is refused, or
// with too_big: more-nodes spread over as many nodes as needed.
package batchscripts
