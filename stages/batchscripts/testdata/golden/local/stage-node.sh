#!/bin/bash
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
