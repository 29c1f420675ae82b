// Package cache is squall's content-addressed store: one per campaign
// directory, a bbolt index beside a tree of object directories.
//
// Layout under the store directory (default <campaign dir>/.squall):
//
//	index.db            bbolt index (schema in schema.go)
//	owner.json          who holds the store now (pid, host, command, start)
//	objects/ab/<key>/   the outputs of one instance, named by its cache key
//	objects/ab/<key>.receipt.json
//	                    the instance's receipt: what the index records,
//	                    written atomically after the outputs are in place;
//	                    the index can be rebuilt from these (Rebuild)
//	tmp/                work directories of running instances
//	logs/<key>.log      the error output of the last attempt of an instance
//	runs/<id>.json      run records; runs/last.json is the newest
//
// Keys are BLAKE3 digests of a canonical encoding (see Key); raw input
// files are hashed by content once and memoised by (path, size, mtime,
// inode), so touching a file re-hashes it but changes no key.
//
// Costs: opening the store takes an exclusive file lock (bbolt's flock)
// for the whole run; a second writer is refused after LockWait with the
// holder named. Reuse checks stat every output file (cheap); only Verify
// and a changed stat re-hash content. Values read from bbolt are copied out
// of the transaction before use.
//
// bbolt's lock is not reliable on network file systems; cluster jobs
// therefore never open the index: they leave receipts that the coordinator
// folds in (FoldReceipt).
package cache
