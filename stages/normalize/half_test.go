package normalize

import (
	"bytes"
	"encoding/binary"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// referencePython is Debian's interpreter with python3-numpy (the python3
// first on PATH is a different one without it).
const referencePython = "/usr/bin/python3"

func havePython(t *testing.T, modules ...string) {
	t.Helper()
	if _, err := os.Stat(referencePython); err != nil {
		t.Skip("reference tool missing: /usr/bin/python3 (install Debian python3-numpy python3-netcdf4)")
	}
	for _, m := range modules {
		if err := exec.Command(referencePython, "-c", "import "+m).Run(); err != nil {
			t.Skipf("reference tool missing: python module %s for /usr/bin/python3 (install the Debian package)", m)
		}
	}
}

// TestFloat16AgainstNumpy compares Float16Bits with numpy's float32 ->
// float16 cast (round to nearest even) on edge cases and a million random
// bit patterns, and Float16Value with numpy on all 65536 half values.
func TestFloat16AgainstNumpy(t *testing.T) {
	havePython(t, "numpy")
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(16, 16)) // fixed seed
	var in []float32
	for _, f := range []float32{0, 1, -1, 65504, 65519.99, 65520, 1e-8, 2.9802322e-08, 5.9604645e-08,
		6.097555e-05, 6.1035156e-05, 0.33333334, 1.0009765625, 1.00048828125, 1.00146484375,
		float32(math.Inf(1)), float32(math.Inf(-1)), 1e30, -1e-30} {
		in = append(in, f, -f)
	}
	for i := 0; i < 1<<20; i++ {
		u := rng.Uint32()
		if i%2 == 0 {
			// Concentrate on the half range, where rounding matters.
			u = u&0x807fffff | uint32(103+rng.IntN(40))<<23
		}
		f := math.Float32frombits(u)
		if f != f {
			continue // NaN payloads: numpy keeps some payload bits; we do not
		}
		in = append(in, f)
	}
	var buf bytes.Buffer
	binary.Write(&buf, binary.LittleEndian, in)
	inPath := filepath.Join(dir, "in.f32")
	if err := os.WriteFile(inPath, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	script := `
import numpy as np, sys
a = np.fromfile(sys.argv[1], dtype='<f4')
with np.errstate(over='ignore'):
    a.astype('<f2').view('<u2').tofile(sys.argv[2])
np.arange(65536, dtype='<u2').view('<f2').astype('<f4').view('<u4').tofile(sys.argv[3])
`
	outPath, allPath := filepath.Join(dir, "out.u16"), filepath.Join(dir, "all.u32")
	cmd := exec.Command(referencePython, "-c", script, inPath, outPath, allPath)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("numpy: %v\n%s", err, out)
	}
	raw, _ := os.ReadFile(outPath)
	want := make([]uint16, len(in))
	binary.Read(bytes.NewReader(raw), binary.LittleEndian, want)
	bad := 0
	for i, f := range in {
		if got := Float16Bits(f); got != want[i] {
			if bad < 10 {
				t.Errorf("Float16Bits(%g = %#08x) = %#04x, numpy %#04x", f, math.Float32bits(f), got, want[i])
			}
			bad++
		}
	}
	raw, _ = os.ReadFile(allPath)
	all := make([]uint32, 65536)
	binary.Read(bytes.NewReader(raw), binary.LittleEndian, all)
	for h := 0; h < 65536; h++ {
		got := math.Float32bits(Float16Value(uint16(h)))
		if got != all[h] {
			t.Fatalf("Float16Value(%#04x) = %#08x, numpy %#08x", h, got, all[h])
		}
	}
	if bad > 0 {
		t.Fatalf("%d of %d conversions differ from numpy", bad, len(in))
	}
}

// TestFloat16RoundTrip: every half value survives value -> bits (derived
// from the format: binary16 values are exact in binary32).
func TestFloat16RoundTrip(t *testing.T) {
	for h := 0; h < 65536; h++ {
		f := Float16Value(uint16(h))
		if f != f {
			continue
		}
		if got := Float16Bits(f); got != uint16(h) {
			t.Fatalf("%#04x -> %g -> %#04x", h, f, got)
		}
	}
}

// TestFloat16Of64AgainstNumpy: float64 -> binary16 in one rounding, as
// numpy's astype(float16) on float64 does; a detour through float32 would
// round twice (the test includes such ties).
func TestFloat16Of64AgainstNumpy(t *testing.T) {
	havePython(t, "numpy")
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(64, 16)) // fixed seed
	in := []float64{1 + 1.0/2048 + 1.0/(1<<30), -(1 + 3.0/2048 - 1.0/(1<<40)), 5.960464477539063e-08, 2.98023223876953125e-08 * (1 + 1e-12)}
	for i := 0; i < 1<<18; i++ {
		in = append(in, math.Ldexp(rng.Float64()+0.5, rng.IntN(44)-28)*float64(1-2*rng.IntN(2)))
	}
	var buf bytes.Buffer
	binary.Write(&buf, binary.LittleEndian, in)
	inPath, outPath := filepath.Join(dir, "in.f64"), filepath.Join(dir, "out.u16")
	os.WriteFile(inPath, buf.Bytes(), 0o644)
	script := `
import numpy as np, sys
with np.errstate(over='ignore'):
    np.fromfile(sys.argv[1], dtype='<f8').astype('<f2').view('<u2').tofile(sys.argv[2])
`
	if out, err := exec.Command(referencePython, "-c", script, inPath, outPath).CombinedOutput(); err != nil {
		t.Fatalf("numpy: %v\n%s", err, out)
	}
	raw, _ := os.ReadFile(outPath)
	want := make([]uint16, len(in))
	binary.Read(bytes.NewReader(raw), binary.LittleEndian, want)
	for i, x := range in {
		if got := Float16BitsOf64(x); got != want[i] {
			t.Fatalf("Float16BitsOf64(%.17g) = %#04x, numpy %#04x", x, got, want[i])
		}
	}
}
