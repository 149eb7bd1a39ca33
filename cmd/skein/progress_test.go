package main

import (
	"bytes"
	"log/slog"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/train"
)

// fakeRun drives a progress display through events at chosen times.
type fakeRun struct {
	p        *progress
	t0, now  time.Time
	finished int
	total    int
}

func newFakeRun(live bool, out *bytes.Buffer, models []string, perModel, jobs int) *fakeRun {
	p := newProgress(out, slog.New(slog.NewTextHandler(out, nil)), models, perModel, jobs)
	p.live = live
	f := &fakeRun{p: p, t0: time.Date(2026, 1, 1, 9, 0, 0, 0, time.UTC), total: len(models) * perModel}
	f.now = f.t0
	p.now = func() time.Time { return f.now }
	p.last = f.t0
	p.eta.began = f.t0
	return f
}

func (f *fakeRun) at(d time.Duration) *fakeRun { f.now = f.t0.Add(d); return f }

func (f *fakeRun) send(kind train.EventKind, name string, u train.Unit) {
	e := train.Event{Kind: kind, Model: name, Unit: u, Total: f.total, Finished: f.finished, Elapsed: f.now.Sub(f.t0)}
	if kind == train.UnitFinished {
		f.finished++
		e.Finished = f.finished
	}
	f.p.event(e)
}

// TestEstimateHonest: until every model with units left has finished
// one, the time left is only a lower bound naming the models not timed
// (nothing at all before any unit finished); then the estimate counts each
// model's remaining units at that model's own pace, shared by the jobs,
// instead of the pace of whichever units finished first.
func TestEstimateHonest(t *testing.T) {
	var out bytes.Buffer
	// Two models of 8 units each, 2 jobs: the baseline takes 1 s a unit,
	// the network 60 s.
	f := newFakeRun(false, &out, []string{"ridge", "net"}, 8, 2)
	ridge := func(k int) train.Unit { return train.Unit{Model: 0, Fold: k} }
	net := func(k int) train.Unit { return train.Unit{Model: 1, Fold: k} }
	f.at(0).send(train.UnitStarted, "ridge", ridge(0))
	f.at(0).send(train.UnitStarted, "ridge", ridge(1))
	f.at(time.Second).send(train.UnitFinished, "ridge", ridge(0))
	// Ridge: 6 units of 1 s not started and one running for 1 s of its 1 s,
	// over 2 jobs: at least 3 s, the network not timed.
	if got, want := f.p.left(f.now), "at least 3s left (not yet timed: net)"; got != want {
		t.Errorf("left = %q, want %q", got, want)
	}
	f.at(time.Second).send(train.UnitFinished, "ridge", ridge(1))
	for k := 2; k < 8; k++ {
		f.at(time.Second).send(train.UnitStarted, "ridge", ridge(k))
		f.at(2*time.Second).send(train.UnitFinished, "ridge", ridge(k))
	}
	f.at(2*time.Second).send(train.UnitStarted, "net", net(0))
	f.at(2*time.Second).send(train.UnitStarted, "net", net(1))
	f.at(62*time.Second).send(train.UnitFinished, "net", net(0))
	// Left: net(1) has run 60 s of its 60 s (0 left) and 6 network units
	// of 60 s are not started: 360 s of work over 2 jobs = 180 s. A pace
	// taken over all units (9 finished in 62 s) would say 7 × 62/9 ≈ 48 s.
	left, untimed := f.p.eta.left(f.now)
	if len(untimed) > 0 || left != 180*time.Second {
		t.Errorf("left = %v (untimed %v), want 3m0s", left, untimed)
	}
	if got, want := f.p.left(f.now), "about 3m0s left"; got != want {
		t.Errorf("left = %q, want %q", got, want)
	}
	g := newFakeRun(false, &out, []string{"net"}, 4, 1)
	g.at(0).send(train.UnitStarted, "net", net(0))
	if got, want := g.p.left(g.now), "time left not known yet (not yet timed: net)"; got != want {
		t.Errorf("before any unit finished: left = %q, want %q", got, want)
	}
}

// TestProgressLive: on a terminal every running unit has its own line
// naming the loss shown, and the permutation test shows its count.
func TestProgressLive(t *testing.T) {
	var out bytes.Buffer
	f := newFakeRun(true, &out, []string{"fc-net", "fc+sc-net"}, 4, 2)
	a, b := train.Unit{Model: 0, Repeat: 0, Fold: 1}, train.Unit{Model: 1, Repeat: 0, Fold: 2}
	f.at(0).send(train.UnitStarted, "fc-net", a)
	f.at(0).send(train.UnitStarted, "fc+sc-net", b)
	f.p.event(train.Event{Kind: train.EpochDone, Model: "fc-net", Unit: a, Epoch: model.Epoch{Epoch: 14, Member: 2, TrainLoss: 0.5, ValidLoss: 0.831}})
	f.p.event(train.Event{Kind: train.EpochDone, Model: "fc+sc-net", Unit: b, Epoch: model.Epoch{Epoch: 3, TrainLoss: 0.9, ValidLoss: math.NaN()}})
	f.at(time.Second).p.draw(f.now)
	screen := out.String()
	screen = screen[strings.LastIndex(screen, "\033[J")+len("\033[J"):]
	for _, want := range []string{
		"0/8 units",
		"time left not known yet (not yet timed: fc-net, fc+sc-net)",
		"  fc-net repeat 1 fold 2, member 2, epoch 14: inner-validation loss 0.831 (training loss 0.5)\n",
		"  fc+sc-net repeat 1 fold 3, epoch 3: training loss 0.9 (no inner validation part)\n",
	} {
		if !strings.Contains(screen, want) {
			t.Errorf("live area lacks %q:\n%s", want, screen)
		}
	}
	f.p.event(train.Event{Kind: train.PermutationDone, Model: "fc-net", Finished: 250, Total: 1000, Elapsed: 30 * time.Second})
	f.at(3 * time.Second).p.draw(f.now)
	screen = out.String()
	if screen = screen[strings.LastIndex(screen, "\033[J")+len("\033[J"):]; !strings.Contains(screen, "250/1000 permutations, 30s; now fc-net") {
		t.Errorf("live area during the permutation test:\n%s", screen)
	}
	for _, line := range strings.Split(out.String(), "\n") {
		if n := len([]rune(line)); n > 100+10 { // the area's width plus its escape codes
			t.Errorf("line of %d characters: %q", n, line)
		}
	}
}

// TestProgressLog: without a terminal the log line lists every running
// unit and the permutation test logs its count.
func TestProgressLog(t *testing.T) {
	var out bytes.Buffer
	f := newFakeRun(false, &out, []string{"ridge", "cpm"}, 2, 2)
	f.at(0).send(train.UnitStarted, "ridge", train.Unit{Model: 0})
	f.at(0).send(train.UnitStarted, "cpm", train.Unit{Model: 1})
	f.at(20*time.Second).send(train.UnitFinished, "ridge", train.Unit{Model: 0})
	if log := out.String(); !strings.Contains(log, "done=1 of=4") || !strings.Contains(log, "running=\"cpm repeat 1 fold 1\"") {
		t.Errorf("log:\n%s", log)
	}
	f.p.event(train.Event{Kind: train.PermutationDone, Model: "ridge", Finished: 4, Total: 4, Elapsed: time.Minute})
	if log := out.String(); !strings.Contains(log, "permutation test") || !strings.Contains(log, "done=4 of=4") {
		t.Errorf("log:\n%s", log)
	}
}
