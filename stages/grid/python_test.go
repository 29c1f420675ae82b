package grid

import (
	"bytes"
	"os"
	"os/exec"
	"strings"
	"testing"
)

// referencePython is Debian's interpreter, which has python3-numpy and
// python3-scipy; the python3 first on PATH may lack them.
const referencePython = "/usr/bin/python3"

// runPython runs script with referencePython, feeding stdin, and returns
// its standard output. The test is skipped (not failed) when the
// interpreter or one of the modules it imports (listed in modules, for the
// message) is missing.
func runPython(t *testing.T, modules string, script string, stdin []byte) []byte {
	t.Helper()
	if _, err := os.Stat(referencePython); err != nil {
		t.Skipf("reference check skipped: %s not found (install Debian python3 with %s)", referencePython, modules)
	}
	cmd := exec.Command(referencePython, "-c", script)
	cmd.Stdin = bytes.NewReader(stdin)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		if strings.Contains(stderr.String(), "ModuleNotFoundError") || strings.Contains(stderr.String(), "ImportError") {
			t.Skipf("reference check skipped: %s cannot import %s (install the Debian python3-numpy/python3-scipy/python3-matplotlib packages): %s",
				referencePython, modules, strings.TrimSpace(stderr.String()))
		}
		t.Fatalf("reference python failed: %v\n%s", err, stderr.String())
	}
	return out
}
