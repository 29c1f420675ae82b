package pipeline

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"github.com/squall-climate/squall/cache"
)

// Files of an instance's work directory, shared by the runner, the child
// entry point and cluster jobs.
const (
	workJobFile      = "job.json"
	workManifestFile = "manifest.json"
	workLogFile      = "log"
	workOutDir       = "out"
)

// RunChild is the child-process entry point (`squall exec-instance`): it
// runs one instance described by a job file, then hashes and fsyncs what
// it wrote and leaves manifest.json beside the job file. The runner, not
// the child, moves outputs into the store and records them.
func RunChild(ctx context.Context, jobPath string, reg *Registry, log io.Writer) (err error) {
	b, err := os.ReadFile(jobPath)
	if err != nil {
		return fmt.Errorf("read job: %w", err)
	}
	var job Job
	if err := json.Unmarshal(b, &job); err != nil {
		return fmt.Errorf("job %s: %w", jobPath, err)
	}
	kind, ok := reg.Lookup(job.Kind)
	if !ok {
		return fmt.Errorf("job %s: this squall has no stage kind %q", jobPath, job.Kind)
	}
	job.Log = log
	// A bug in a stage must fail only its instance, with a trace.
	if err := runKind(ctx, kind, &job); err != nil {
		return err
	}
	files, err := cache.BuildManifest(job.OutDir)
	if err != nil {
		return fmt.Errorf("hash outputs: %w", err)
	}
	mb, _ := json.Marshal(files)
	return writeAtomic(filepath.Join(filepath.Dir(jobPath), workManifestFile), mb)
}

func writeAtomic(path string, data []byte) error {
	tmp := path + ".tmp"
	if err := os.WriteFile(tmp, data, 0o644); err != nil {
		return err
	}
	f, err := os.Open(tmp)
	if err == nil {
		f.Sync()
		f.Close()
	}
	return os.Rename(tmp, path)
}
