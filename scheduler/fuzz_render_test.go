package scheduler_test

// FuzzRenderScript renders a job with arbitrary command words, an
// arbitrary exported value, an arbitrary job-directory name and an
// arbitrary launcher word (templated as batch-scripts does with
// Templates), for each engine, and runs the script with bash. Fake
// commands on PATH record what they receive. Property: the fake launcher
// gets exactly its configured word (placeholders replaced) followed by
// the command, the fake trainer gets exactly the configured words and
// the exported value, nothing else runs (PATH holds only the fakes, so
// any other command is "not found"), and no file appears but the
// recorders' own.
//
// A longer run: go test -run '^$' -fuzz FuzzRenderScript -fuzztime 10m ./scheduler

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/squall-climate/squall/scheduler"
	"github.com/squall-climate/squall/scheduler/all"
)

// The fakes: the launcher records its arguments, drops its own option
// word and runs the rest; the trainer records its arguments and one
// exported variable. Both are bash with an absolute interpreter path so
// that PATH can hold nothing else.
const (
	fakeLauncher = "#!/bin/bash\nprintf '%s\\0' \"$@\" >\"$FUZZ_OUT/launcher.args\"\nshift\nexec \"$@\"\n"
	fakeTrainer  = "#!/bin/bash\nprintf '%s\\0' \"$@\" >\"$FUZZ_OUT/trainer.args\"\nprintf '%s' \"$FUZZ_VALUE\" >\"$FUZZ_OUT/trainer.env\"\n"
)

var fuzzPlaceholderRE = regexp.MustCompile(`\{([^{}]*)\}`)

func FuzzRenderScript(f *testing.F) {
	if _, err := exec.LookPath("bash"); err != nil {
		f.Skip("bash not installed")
	}
	hostile := []string{
		"$(touch PWNED1)", "`touch PWNED2`", "'; touch PWNED3; '", `"; touch PWNED4; "`, "a;touch PWNED5",
		"line\ntouch PWNED6", "two words", "--rm -rf /", "-n", "$HOME", "${PATH}", "*", "~", "a|touch PWNED7",
		"&& touch PWNED8", "\\", "", "{ranks}", "{nope}", "!!", "%s%n", "\x7f\xff",
	}
	for i, h := range hostile {
		f.Add(uint8(i), h, hostile[(i+1)%len(hostile)], "plain", h, "job dir "+h, "--np={ranks}", i%2 == 0)
	}
	f.Fuzz(func(t *testing.T, engine uint8, w1, w2, w3, value, dirName, launchWord string, warning bool) {
		for _, s := range []string{w1, w2, w3, value, dirName, launchWord} {
			if strings.ContainsRune(s, 0) {
				return // an argument or environment value cannot hold NUL
			}
		}
		if dirName == "" || dirName == "." || dirName == ".." || strings.Contains(dirName, "/") || len(dirName) > 200 {
			return // one path component
		}
		base := t.TempDir()
		bin := filepath.Join(base, "bin")
		out := filepath.Join(base, "out")
		jobDir := filepath.Join(base, "work", dirName)
		for _, d := range []string{bin, out, jobDir} {
			if err := os.MkdirAll(d, 0o755); err != nil {
				t.Fatal(err)
			}
		}
		os.WriteFile(filepath.Join(bin, "fake-launcher"), []byte(fakeLauncher), 0o755)
		os.WriteFile(filepath.Join(bin, "fake-trainer"), []byte(fakeTrainer), 0o755)

		p := scheduler.Default()
		p.Engine = scheduler.Engines[int(engine)%len(scheduler.Engines)]
		p.Walltime = scheduler.Duration(time.Hour)
		p.Node.Cores = 4
		if err := p.Validate(); err != nil {
			t.Fatal(err)
		}
		e, err := all.New(p)
		if err != nil {
			t.Fatal(err)
		}
		// The body batch-scripts would write: launcher words and the
		// command, each rendered by Templates.
		vars := map[string]string{"nodes": "1", "ranks": "4"}
		launch, lerr := scheduler.Templates([]string{"fake-launcher", launchWord}, vars)
		command, cerr := scheduler.Templates([]string{"fake-trainer", w1, w2, w3}, nil)
		if lerr != nil || cerr != nil {
			// Only an unknown placeholder may be refused.
			for _, err := range []error{lerr, cerr} {
				if err != nil && !strings.Contains(err.Error(), "unknown placeholder") {
					t.Fatalf("Templates: %v", err)
				}
			}
			return
		}
		spec := &scheduler.JobSpec{Name: "fuzz", Dir: jobDir, Warning: warning,
			Body: "squall_run " + launch + " " + command + "\n",
			Env:  []scheduler.EnvVar{{Name: "FUZZ_VALUE", Value: value}}}
		script, err := e.Render(spec)
		if err != nil {
			t.Fatalf("Render: %v", err)
		}
		scriptPath := filepath.Join(base, "job.sh")
		os.WriteFile(scriptPath, script, 0o644)
		before := fuzzListing(base)
		cmd := exec.Command("bash", scriptPath)
		cmd.Dir = base
		cmd.Env = []string{"PATH=" + bin, "FUZZ_OUT=" + out, "HOME=" + base}
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		if err := cmd.Run(); err != nil {
			t.Fatalf("%s script failed: %v\n%s\n%s", p.Engine, err, stderr.String(), script)
		}
		if strings.Contains(stderr.String(), "not found") {
			t.Fatalf("the script tried to run something else:\n%s\n%s", stderr.String(), script)
		}
		wantLaunch := fuzzPlaceholderRE.ReplaceAllStringFunc(launchWord, func(m string) string { return vars[m[1:len(m)-1]] })
		check := func(file string, want []string) {
			got, err := os.ReadFile(filepath.Join(out, file))
			if err != nil {
				t.Fatalf("%s: %v\n%s\n%s", file, err, stderr.String(), script)
			}
			if w := strings.Join(want, "\x00") + "\x00"; string(got) != w {
				t.Fatalf("%s engine: %s got %q, want %q\n%s", p.Engine, file, got, w, script)
			}
		}
		check("launcher.args", []string{wantLaunch, "fake-trainer", w1, w2, w3})
		check("trainer.args", []string{w1, w2, w3})
		if got, _ := os.ReadFile(filepath.Join(out, "trainer.env")); string(got) != value {
			t.Fatalf("exported value arrived as %q, want %q", got, value)
		}
		after := fuzzListing(base)
		for _, p := range after {
			if !strings.HasPrefix(p, "out/") && !fuzzContains(before, p) {
				t.Fatalf("the script created %s\n%s", p, script)
			}
		}
	})
}

func fuzzListing(dir string) []string {
	var out []string
	filepath.Walk(dir, func(p string, fi os.FileInfo, err error) error {
		if err == nil {
			rel, _ := filepath.Rel(dir, p)
			out = append(out, filepath.ToSlash(rel))
		}
		return nil
	})
	sort.Strings(out)
	return out
}

func fuzzContains(xs []string, s string) bool {
	i := sort.SearchStrings(xs, s)
	return i < len(xs) && xs[i] == s
}
