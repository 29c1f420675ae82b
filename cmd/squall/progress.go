package main

import (
	"encoding/json"
	"fmt"
	"os"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"github.com/squall-climate/squall/pipeline"
)

// progress shows a run: a bar on a terminal, plain lines otherwise, JSON
// lines with --json. NO_COLOR turns colour off.
type progress struct {
	e      *env
	json   bool
	bar    *progressbar.ProgressBar
	mu     sync.Mutex
	plain  bool
	lastAt time.Time
}

func newProgress(e *env, asJSON bool) *progress {
	p := &progress{e: e, json: asJSON}
	if asJSON {
		return p
	}
	f, ok := e.stderr.(*os.File)
	if ok && term.IsTerminal(int(f.Fd())) {
		color := os.Getenv("NO_COLOR") == ""
		p.bar = progressbar.NewOptions(-1,
			progressbar.OptionSetWriter(f),
			progressbar.OptionEnableColorCodes(color),
			progressbar.OptionShowCount(),
			progressbar.OptionSetElapsedTime(true),
			progressbar.OptionSetPredictTime(true),
			progressbar.OptionThrottle(100*time.Millisecond),
			progressbar.OptionClearOnFinish(),
		)
		return p
	}
	p.plain = true
	return p
}

func (p *progress) event(ev pipeline.Event) {
	p.mu.Lock()
	defer p.mu.Unlock()
	switch {
	case p.json:
		m := map[string]any{"type": ev.Type, "instance": ev.Step.Label(), "stage": ev.Step.Stage.Name,
			"scenario": ev.Step.Scenario, "block": ev.Step.Block, "member": ev.Step.Member,
			"done": ev.Done, "total": ev.Total, "running": ev.Running, "elapsed_s": ev.Elapsed.Seconds()}
		if ev.Type == "finish" {
			m["state"] = ev.State
			if ev.Err != "" {
				m["error"] = ev.Err
			}
		}
		b, _ := json.Marshal(m)
		fmt.Fprintln(p.e.stdout, string(b))
	case p.bar != nil:
		if p.bar.GetMax() != ev.Total {
			p.bar.ChangeMax(ev.Total)
		}
		p.bar.Describe(fmt.Sprintf("%d running", ev.Running))
		if ev.Type == "finish" {
			p.bar.Add(1)
			if ev.State == pipeline.StateFailed {
				p.bar.Clear()
				fmt.Fprintf(p.e.stderr, "failed %s: %s\n", ev.Step.Label(), firstLineOf(ev.Err))
			}
		}
	case p.plain:
		// Plain lines for logs: every instance that did work, every
		// failure, and a count at most every few seconds for reuse.
		if ev.Type != "finish" {
			return
		}
		if ev.State == pipeline.StateReused && time.Since(p.lastAt) < 5*time.Second && ev.Done != ev.Total {
			return
		}
		p.lastAt = time.Now()
		eta := ""
		if ev.Done > 0 && ev.Done < ev.Total {
			rest := time.Duration(float64(ev.Elapsed) / float64(ev.Done) * float64(ev.Total-ev.Done))
			eta = fmt.Sprintf(", about %s left", rest.Round(time.Second))
		}
		line := fmt.Sprintf("[%d/%d] %s %s (%d running, %s elapsed%s)", ev.Done, ev.Total, ev.State, ev.Step.Label(), ev.Running, ev.Elapsed.Round(time.Second), eta)
		if ev.Err != "" {
			line += ": " + firstLineOf(ev.Err)
		}
		fmt.Fprintln(p.e.stderr, line)
	}
}

func (p *progress) close() {
	if p.bar != nil {
		p.bar.Finish()
	}
}
