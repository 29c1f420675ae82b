package batchscripts

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/scheduler/enginetest"
)

var update = flag.Bool("update", false, "rewrite golden files")

// fixture writes a tiny campaign: three shards with a manifest, stats,
// weights, two per-block normalized files, and a site profile.
func fixture(t *testing.T, camp, profile string, settings map[string]any) *pipeline.Job {
	t.Helper()
	sh := filepath.Join(camp, "cache", "shard")
	nm := filepath.Join(camp, "cache", "normalize")
	for _, d := range []string{sh, nm} {
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	man := Manifest{}
	for i, role := range []string{"train", "train", "validate", "test"} {
		name := fmt.Sprintf("shard-%03d.nc", i)
		data := []byte(strings.Repeat(string(rune('a'+i)), 1000*(i+1)))
		os.WriteFile(filepath.Join(sh, name), data, 0o644)
		man.Shards = append(man.Shards, ShardEntry{File: name, Role: role, Samples: int64(i + 1), Bytes: int64(len(data))})
	}
	mj, _ := json.Marshal(man)
	os.WriteFile(filepath.Join(sh, "manifest.json"), mj, 0o644)
	os.WriteFile(filepath.Join(sh, "weights.json"), []byte(`{}`), 0o644)
	os.WriteFile(filepath.Join(nm, "stats.json"), []byte(`{}`), 0o644)
	prof := filepath.Join(camp, "site.yaml")
	os.WriteFile(prof, []byte(profile), 0o644)
	s := pipeline.Values{}
	for _, st := range (Kind{}).Settings() {
		s[st.Name] = st.Default
	}
	s["profile"] = "site.yaml"
	for k, v := range settings {
		s[k] = v
	}
	inputs := []pipeline.Input{
		{From: "profile", Kind: "file", Files: []string{prof}},
		{From: "shard", Kind: "shard", Dir: sh, Files: []string{filepath.Join(sh, "manifest.json"), filepath.Join(sh, "weights.json")}},
		{From: "normalize", Kind: "normalize", Dir: nm, Files: []string{filepath.Join(nm, "stats.json")}},
	}
	for _, blk := range []string{"1990", "1991"} {
		f := filepath.Join(nm, "hist-"+blk+".nc")
		os.WriteFile(f, nil, 0o644)
		inputs = append(inputs, pipeline.Input{From: "normalize", Kind: "normalize", Scenario: "hist", Block: blk, Files: []string{f}})
	}
	out := filepath.Join(camp, "out")
	os.MkdirAll(out, 0o755)
	return &pipeline.Job{Stage: "scripts", Kind: "batch-scripts", Settings: s, Inputs: inputs, OutDir: out,
		Campaign: pipeline.CampaignInfo{Name: "t", Dir: camp}}
}

var profiles = map[string]string{
	"slurm": "engine: slurm\npartition: gpu\naccount: clim042\nnode: {cores: 42, accelerators: 6, accelerator_peak_tflops: 125, scratch: {path: /mnt/local, size: 800GB}}\nwalltime: 6h\nwarning: {signal: USR1, lead: 10m}\nsetup: [module load cuda/12.2]\n",
	"pbs":   "engine: pbs\npartition: gpu\nnode: {cores: 42, accelerators: 6, accelerator_peak_tflops: 125, scratch: {path: $TMPDIR, size: 800GB}}\nwalltime: 6h\n",
	"lsf":   "engine: lsf\npartition: gpu\nnode: {cores: 42, accelerators: 6, accelerator_peak_tflops: 125, scratch: {path: /mnt/bb, size: 800GB}}\nwalltime: 6h\n",
	"local": "engine: local\nnode: {cores: 2, scratch: {path: /tmp/squall-scratch, size: 1GB}}\nwalltime: 1h\n",
}

func TestGoldenAndShellcheck(t *testing.T) {
	for _, engine := range []string{"slurm", "pbs", "lsf", "local"} {
		t.Run(engine, func(t *testing.T) {
			camp := t.TempDir()
			job := fixture(t, camp, profiles[engine], map[string]any{
				"train_command": []string{"python", "train.py", "--data={shards}", "--ckpt", "{checkpoints}"},
				"infer_command": []string{"python", "infer.py", "{input}", "{output}"},
				"nodes":         map[bool]int{true: 1, false: 2}[engine == "local"],
			})
			if err := (Kind{}).Run(context.Background(), job); err != nil {
				t.Fatal(err)
			}
			files, _ := filepath.Glob(filepath.Join(job.OutDir, "*"))
			more, _ := filepath.Glob(filepath.Join(job.OutDir, "stage", "*"))
			files = append(files, more...)
			sort.Strings(files)
			golden := filepath.Join("testdata", "golden", engine)
			for _, f := range files {
				if st, _ := os.Stat(f); st.IsDir() {
					continue
				}
				data, _ := os.ReadFile(f)
				rel, _ := filepath.Rel(job.OutDir, f)
				if strings.HasSuffix(f, ".sh") || strings.HasSuffix(f, ".sbatch") || strings.HasSuffix(f, ".pbs") || strings.HasSuffix(f, ".lsf") {
					enginetest.ShellCheck(t, engine+"/"+rel, data)
				}
				norm := []byte(strings.ReplaceAll(string(data), camp, "/CAMPAIGN"))
				gp := filepath.Join(golden, rel)
				if *update {
					os.MkdirAll(filepath.Dir(gp), 0o755)
					os.WriteFile(gp, norm, 0o644)
					continue
				}
				want, err := os.ReadFile(gp)
				if err != nil || string(want) != string(norm) {
					t.Errorf("%s differs from %s (run with -update if intended)\n%s", rel, gp, norm)
				}
			}
		})
	}
}

func TestRefuseWhenStagingDoesNotFit(t *testing.T) {
	camp := t.TempDir()
	// 2.5 kB of non-test shards on one node with 2 kB x 0.9 usable.
	prof := "engine: local\nnode: {cores: 2, scratch: {path: /tmp/x, size: 2000}}\nwalltime: 1h\n"
	job := fixture(t, camp, prof, map[string]any{"train_command": []string{"true"}, "nodes": 1})
	err := (Kind{}).Run(context.Background(), job)
	if err == nil || !strings.Contains(err.Error(), "setting nodes") || !strings.Contains(err.Error(), "too_big") {
		t.Errorf("got %v, want a refusal naming the nodes setting and too_big", err)
	}
}

// TestHostileValues runs the emitted local scripts with bash: hostile words
// in the training command, in the campaign path and in the scratch path
// must reach the trainer verbatim and run nothing.
func TestHostileValues(t *testing.T) {
	if _, err := exec.LookPath("sha256sum"); err != nil {
		t.Skip("sha256sum (coreutils) not found")
	}
	root := t.TempDir()
	camp := filepath.Join(root, "camp $(touch PWNED1) `touch PWNED2` 'q' \"d\"; touch PWNED3")
	scratch := filepath.Join(root, "scratch;touch PWNED4 $(touch PWNED5)")
	os.MkdirAll(camp, 0o755)
	trainer := filepath.Join(root, "fake-trainer")
	os.WriteFile(trainer, []byte("#!/bin/bash\nprintf '%s\\0' \"$@\" >\"$SQUALL_CHECKPOINTS/argv\"\nls \"$SQUALL_SHARDS\" >\"$SQUALL_CHECKPOINTS/staged\"\n"), 0o755)
	hostile := []string{"$(touch PWNED6)", "`touch PWNED7`", "'; touch PWNED8; '", "a b", "--rm", "-n", "x\ny", "{shards}"}
	prof := fmt.Sprintf("engine: local\nnode: {cores: 2, scratch: {path: %q, size: 1GB}}\nwalltime: 1h\nstate_dir: %q\n", scratch, filepath.Join(root, "state"))
	job := fixture(t, camp, prof, map[string]any{"train_command": append([]string{trainer}, hostile...), "segments": 2})
	if err := (Kind{}).Run(context.Background(), job); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command("bash", filepath.Join(job.OutDir, "submit.sh"))
	cmd.Dir = root
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("submit.sh: %v\n%s", err, out)
	}
	ck := filepath.Join(camp, "runs", "train", "checkpoints")
	got, _ := os.ReadFile(filepath.Join(ck, "argv"))
	var want []string
	for _, h := range hostile {
		if h == "{shards}" { // the one placeholder: the node-local directory
			h = filepath.Join(scratch, "squall-shards-local")
		}
		want = append(want, h)
	}
	if string(got) != strings.Join(want, "\x00")+"\x00" {
		t.Errorf("trainer argv %q, want %q", got, strings.Join(want, "\x00")+"\x00")
	}
	staged, _ := os.ReadFile(filepath.Join(ck, "staged"))
	if string(staged) != "shard-000.nc\nshard-001.nc\nshard-002.nc\n" {
		t.Errorf("staged %q, want the three non-test shards", staged)
	}
	if _, err := os.Stat(filepath.Join(ck, "TRAINING_DONE")); err != nil {
		t.Errorf("no TRAINING_DONE after a clean finish: %v\n%s", err, out)
	}
	if !strings.Contains(string(out), "training finished in an earlier segment") {
		t.Errorf("second segment did not skip finished training:\n%s", out)
	}
	filepath.Walk(root, func(p string, info os.FileInfo, err error) error {
		if err == nil && strings.HasPrefix(info.Name(), "PWNED") {
			t.Errorf("hostile value ran a command: %s", p)
		}
		return nil
	})
}
