package report

import (
	"bytes"
	"context"
	"image/color"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// chromium finds Debian's chromium (CI installs it) or skips.
func chromium(t *testing.T) string {
	t.Helper()
	for _, p := range []string{"/usr/bin/chromium", "/usr/bin/chromium-browser"} {
		if _, err := os.Stat(p); err == nil {
			return p
		}
	}
	if p, err := exec.LookPath("chromium"); err == nil {
		return p
	}
	t.Skip("browser check skipped: chromium not found (apt-get install chromium; CI installs it)")
	return ""
}

// browse runs headless Chromium with a fresh profile, no network (every
// host name resolves to nothing) and console logging on stderr.
func browse(t *testing.T, bin string, args ...string) (stdout, stderr string) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	base := []string{"--headless", "--no-sandbox", "--disable-gpu", "--no-first-run", "--disable-background-networking",
		"--disable-component-update", "--disable-sync", "--user-data-dir=" + t.TempDir(),
		"--host-resolver-rules=MAP * ~NOTFOUND", "--enable-logging=stderr", "--v=0", "--hide-scrollbars"}
	cmd := exec.CommandContext(ctx, bin, append(base, args...)...)
	var o, e bytes.Buffer
	cmd.Stdout, cmd.Stderr = &o, &e
	if err := cmd.Run(); err != nil {
		t.Fatalf("chromium %v: %v\n%s", args, err, e.String())
	}
	return o.String(), e.String()
}

// consoleProblems returns the lines of Chromium's log that report a page
// console message, a script error or a failed resource load.
func consoleProblems(log string) []string {
	var out []string
	for _, line := range strings.Split(log, "\n") {
		if strings.Contains(line, ":CONSOLE") || strings.Contains(line, "Uncaught") ||
			strings.Contains(line, "Failed to load resource") || strings.Contains(line, "net::ERR_") {
			out = append(out, line)
		}
	}
	return out
}

func TestReportInChromium(t *testing.T) {
	bin := chromium(t)
	dir := t.TempDir()

	// The console detector must see a console error on a page that makes
	// one; otherwise a clean result below would prove nothing.
	canary := filepath.Join(dir, "canary.html")
	writeFile(t, canary, `<!DOCTYPE html><html><body><script>console.error("canary-7f3a")</script></body></html>`)
	_, log := browse(t, bin, "--dump-dom", "file://"+canary)
	if p := consoleProblems(log); len(p) == 0 || !strings.Contains(strings.Join(p, "\n"), "canary-7f3a") {
		t.Fatalf("console messages are not visible in Chromium's log; cannot check the report (log:\n%s)", log)
	}

	f := newFixture(t)
	page := filepath.Join(dir, "report.html")
	if err := Write(page, f.in); err != nil {
		t.Fatal(err)
	}
	dom, log := browse(t, bin, "--dump-dom", "file://"+page)
	if p := consoleProblems(log); len(p) > 0 {
		t.Errorf("console problems while loading the report:\n%s", strings.Join(p, "\n"))
	}
	// The browser parsed every inline plot (16 in the fixture; see
	// TestWriteFullReport) and every section.
	if n := strings.Count(dom, `<svg class="plot"`); n != 16 {
		t.Errorf("browser DOM has %d plots, want 16", n)
	}
	for _, id := range []string{"glance", "labels", "evaluation", "events", "maps", "trends", "record"} {
		if !strings.Contains(dom, `id="`+id+`"`) {
			t.Errorf("browser DOM lacks section %s", id)
		}
	}

	// A screenshot of the whole page at a fixed window size.
	const w, h = 1280, 6000
	shot := filepath.Join(dir, "shot.png")
	browse(t, bin, "--screenshot="+shot, "--window-size=1280,6000", "file://"+page)
	fh, err := os.Open(shot)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	img, err := png.Decode(fh)
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != w || b.Dy() != h {
		t.Fatalf("screenshot is %dx%d, want %dx%d", b.Dx(), b.Dy(), w, h)
	}
	// Not blank: many colours, and the plots' own colours are on screen
	// in quantity (the second scenario's orange from bars, trend points
	// and lines; the dark teal of the map ramp; the header's ink).
	distinct := map[color.RGBA]bool{}
	near := func(c color.RGBA, r, g, b uint8) bool {
		d := func(x, y uint8) int { return (int(x) - int(y)) * (int(x) - int(y)) }
		return d(c.R, r)+d(c.G, g)+d(c.B, b) < 3*12*12
	}
	var orange, teal, header int
	bnd := img.Bounds()
	for y := bnd.Min.Y; y < bnd.Max.Y; y += 2 {
		for x := bnd.Min.X; x < bnd.Max.X; x += 2 {
			c := color.RGBAModel.Convert(img.At(x, y)).(color.RGBA)
			distinct[c] = true
			switch {
			case near(c, 0xd9, 0x7b, 0x29):
				orange++
			case near(c, 0x2f, 0x8c, 0x8c), near(c, 0x1a, 0x4e, 0x5c):
				teal++
			case near(c, 0x14, 0x26, 0x2f):
				header++
			}
		}
	}
	t.Logf("screenshot: %d distinct colours (sampled), orange %d, teal %d, header %d", len(distinct), orange, teal, header)
	if len(distinct) < 200 || orange < 500 || teal < 20 || header < 10000 {
		t.Errorf("screenshot looks blank or plot-less: %d colours, orange %d, teal %d, header %d", len(distinct), orange, teal, header)
	}
	if os.Getenv("SQUALL_KEEP_SCREENSHOT") != "" {
		b, _ := os.ReadFile(shot)
		os.WriteFile(os.Getenv("SQUALL_KEEP_SCREENSHOT"), b, 0o644)
	}
}
