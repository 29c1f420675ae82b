package ncio

import (
	"bufio"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sync"
	"testing"
)

// The reference tools are Debian's: /usr/bin/python3 with python3-netcdf4
// (which brings cftime and numpy), ncdump from netcdf-bin, and the sample
// files of libncarg-data. The python3 first on PATH is a different
// interpreter without these modules, so the path is absolute.
const (
	refPython = "/usr/bin/python3"
	sampleDir = "/usr/share/ncarg/data/cdf"
)

// sample returns the path of a Debian libncarg-data sample file or skips.
func sample(t testing.TB, name string) string {
	t.Helper()
	p := filepath.Join(sampleDir, name)
	if _, err := os.Stat(p); err != nil {
		t.Skipf("sample file %s missing (install Debian package libncarg-data): %v", p, err)
	}
	return p
}

var (
	pythonOnce sync.Once
	pythonErr  string
)

// needPython skips unless /usr/bin/python3 can import netCDF4 and cftime.
func needPython(t testing.TB) {
	t.Helper()
	pythonOnce.Do(func() {
		if _, err := os.Stat(refPython); err != nil {
			pythonErr = fmt.Sprintf("%s missing (install Debian python3-netcdf4)", refPython)
			return
		}
		if out, err := exec.Command(refPython, "-c", "import netCDF4, cftime, numpy").CombinedOutput(); err != nil {
			pythonErr = fmt.Sprintf("%s cannot import netCDF4/cftime/numpy (install Debian python3-netcdf4): %v %s", refPython, err, out)
		}
	})
	if pythonErr != "" {
		t.Skip(pythonErr)
	}
}

// pyServer is one reference interpreter kept running for the whole test
// binary: starting Python with numpy and netCDF4 costs about a second, far
// more than any reference computation here. It reads one JSON request per
// line (script and argv) and answers one JSON line (stdout or error).
const pyServer = `
import sys, json, io, traceback
import numpy, netCDF4, cftime
for line in sys.stdin:
    req = json.loads(line)
    buf = io.StringIO()
    old = sys.stdout
    sys.stdout = buf
    err = ""
    try:
        sys.argv = ["-c"] + req["args"]
        exec(req["script"], {"__name__": "__main__"})
    except BaseException:
        err = traceback.format_exc()
    finally:
        sys.stdout = old
    sys.stdout.write(json.dumps({"out": buf.getvalue(), "err": err}) + "\n")
    sys.stdout.flush()
`

var (
	pyMu  sync.Mutex
	pyIn  io.WriteCloser
	pyOut *bufio.Reader
)

// runPython runs a script with the reference interpreter and returns its
// standard output; extra arguments land in sys.argv[1:].
func runPython(t testing.TB, script string, args ...string) string {
	t.Helper()
	needPython(t)
	pyMu.Lock()
	defer pyMu.Unlock()
	if pyIn == nil {
		cmd := exec.Command(refPython, "-c", pyServer)
		cmd.Stderr = os.Stderr
		in, err := cmd.StdinPipe()
		if err != nil {
			t.Fatal(err)
		}
		out, err := cmd.StdoutPipe()
		if err != nil {
			t.Fatal(err)
		}
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		pyIn, pyOut = in, bufio.NewReaderSize(out, 1<<20)
	}
	if args == nil {
		args = []string{}
	}
	req, _ := json.Marshal(map[string]any{"script": script, "args": args})
	if _, err := pyIn.Write(append(req, '\n')); err != nil {
		t.Fatalf("reference python: %v", err)
	}
	line, err := pyOut.ReadBytes('\n')
	if err != nil {
		t.Fatalf("reference python: %v", err)
	}
	var resp struct{ Out, Err string }
	if err := json.Unmarshal(line, &resp); err != nil {
		t.Fatalf("reference python answer %q: %v", line, err)
	}
	if resp.Err != "" {
		t.Fatalf("reference python failed:\n%s", resp.Err)
	}
	return resp.Out
}

// pyRead reads a slab with netCDF4-python (auto mask and scale on), fills
// masked values with NaN, and returns the values as float64 in row-major
// order. slab is a Python index expression such as "[0, :, :, :]".
func pyRead(t testing.TB, path, varName, slab string) []float64 {
	t.Helper()
	return pyReads(t, path, varName, slab)[0]
}

// pyReads reads several (variable, slab) pairs in one Python run, since
// starting the interpreter costs more than the reads.
func pyReads(t testing.TB, path string, pairs ...string) [][]float64 {
	t.Helper()
	dir := t.TempDir()
	args := []string{path, dir}
	args = append(args, pairs...)
	runPython(t, `
import sys, numpy as np, netCDF4
d = netCDF4.Dataset(sys.argv[1])
rest = sys.argv[3:]
for i in range(0, len(rest), 2):
    v = d.variables[rest[i]]
    x = eval("v" + rest[i+1])
    x = np.ma.filled(np.ma.asarray(x).astype("f8"), np.nan)
    np.ascontiguousarray(x, dtype="<f8").tofile("%s/%d.f64" % (sys.argv[2], i // 2))
`, args...)
	var out [][]float64
	for i := 0; i < len(pairs)/2; i++ {
		b, err := os.ReadFile(filepath.Join(dir, fmt.Sprintf("%d.f64", i)))
		if err != nil {
			t.Fatal(err)
		}
		xs := make([]float64, len(b)/8)
		for j := range xs {
			xs[j] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*j:]))
		}
		out = append(out, xs)
	}
	return out
}

// sameFloats compares two slices exactly, NaN equal to NaN, reporting the
// first few differences.
func sameFloats(t testing.TB, what string, got, want []float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d values, reference has %d", what, len(got), len(want))
	}
	bad := 0
	for i := range got {
		g, w := got[i], want[i]
		if g == w || (math.IsNaN(g) && math.IsNaN(w)) {
			continue
		}
		if bad < 5 {
			t.Errorf("%s[%d] = %v, reference %v", what, i, g, w)
		}
		bad++
	}
	if bad > 0 {
		t.Errorf("%s: %d of %d values differ", what, bad, len(got))
	}
}

func f32to64(xs []float32) []float64 {
	out := make([]float64, len(xs))
	for i, x := range xs {
		out[i] = float64(x)
	}
	return out
}

func countNaN(xs []float64) int {
	n := 0
	for _, x := range xs {
		if math.IsNaN(x) {
			n++
		}
	}
	return n
}

// needNcdump skips unless ncdump (Debian netcdf-bin) is on PATH.
func needNcdump(t testing.TB) string {
	t.Helper()
	p, err := exec.LookPath("ncdump")
	if err != nil {
		t.Skip("ncdump missing (install Debian netcdf-bin)")
	}
	return p
}

func mustOpen(t testing.TB, path string) *File {
	t.Helper()
	f, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { f.Close() })
	return f
}

func mustVar(t testing.TB, f *File, name string) *Var {
	t.Helper()
	v, err := f.Var(name)
	if err != nil {
		t.Fatal(err)
	}
	return v
}
