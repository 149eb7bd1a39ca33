package main

import (
	"fmt"
	"io"
	"log/slog"
	"math"
	"os"
	"slices"
	"strings"
	"time"
	"unicode/utf8"

	"golang.org/x/term"

	"github.com/skein-neuro/skein/train"
)

// progress shows a run's progress. On a terminal it keeps a live area of
// a few lines, redrawn in place: a bar with the units finished, the time
// taken and an estimate of the time left, then one line per running unit
// (its epoch and which loss), or during the permutation test the
// permutations done. Elsewhere (cron, nightly jobs) it writes a plain log
// line at most once per interval, and one when the last unit finishes.
type progress struct {
	w        io.Writer
	live     bool // a terminal: the live area is redrawn in place
	width    int  // the terminal's columns
	log      *slog.Logger
	interval time.Duration
	last     time.Time // last redraw or log line
	drawn    int       // lines of the live area on the screen
	now      func() time.Time

	eta   *estimate
	units map[train.Unit]*running // the units being trained
	perm  *train.Event            // the last PermutationDone
	done  train.Event             // the last unit event, for its counts
}

// running is a unit being trained, as its events tell.
type running struct {
	model         string
	repeat, fold  int
	started       time.Time
	epoch, member int
	train, valid  float64
}

// newProgress returns the display of a run of the named models, each
// trained on unitsPerModel units, jobs at a time.
func newProgress(w io.Writer, log *slog.Logger, models []string, unitsPerModel, jobs int) *progress {
	p := &progress{w: w, log: log, interval: 15 * time.Second, now: time.Now,
		eta: newEstimate(models, unitsPerModel, jobs), units: make(map[train.Unit]*running), width: 100}
	p.last = p.now()
	if f, ok := w.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		p.live = true
		if cols, _, err := term.GetSize(int(f.Fd())); err == nil && cols > 20 {
			p.width = cols
		}
	}
	return p
}

// event is a train.Runner's OnEvent.
func (p *progress) event(e train.Event) {
	now := p.now()
	switch e.Kind {
	case train.UnitStarted:
		p.units[e.Unit] = &running{model: e.Model, repeat: e.Unit.Repeat + 1, fold: e.Unit.Fold + 1, started: now,
			train: math.NaN(), valid: math.NaN()}
		p.eta.start(e.Unit, e.Model, now)
	case train.EpochDone:
		if u := p.units[e.Unit]; u != nil {
			u.epoch, u.member, u.train, u.valid = e.Epoch.Epoch, e.Epoch.Member, e.Epoch.TrainLoss, e.Epoch.ValidLoss
		}
	case train.UnitFinished:
		delete(p.units, e.Unit)
		p.eta.finish(e.Unit, e.Model, e.Resumed, now)
		p.done = e
	case train.PermutationDone:
		p.perm = &e
	}
	urgent := e.Kind == train.UnitStarted || e.Kind == train.UnitFinished && e.Finished == e.Total ||
		e.Kind == train.PermutationDone && e.Finished == e.Total
	if p.live {
		if urgent || now.Sub(p.last) >= 200*time.Millisecond {
			p.last = now
			p.draw(now)
		}
		if e.Kind == train.UnitFinished && e.Finished == e.Total || e.Kind == train.PermutationDone && e.Finished == e.Total {
			p.clear() // the run's messages follow on clean lines
		}
		return
	}
	if !urgent && now.Sub(p.last) < p.interval || e.Kind == train.UnitStarted {
		return
	}
	p.last = now
	if e.Kind == train.PermutationDone {
		p.log.Info("permutation test", "model", e.Model, "done", e.Finished, "of", e.Total,
			"elapsed", e.Elapsed.Round(time.Second).String())
		return
	}
	left := p.left(now)
	if p.done.Finished == p.done.Total {
		left = "none"
	}
	p.log.Info("training", "done", p.done.Finished, "of", p.done.Total, "left", left, "running", strings.Join(p.runningLines(), "; "))
}

// left is the estimate of the time left, in words: about so much when
// every model with units left has been timed; at least what the timed
// ones need, naming the others, when some have not; nothing when none
// has.
func (p *progress) left(now time.Time) string {
	d, untimed := p.eta.left(now)
	d = roundDuration(d)
	switch {
	case len(untimed) == 0:
		return "about " + d.String() + " left"
	case d > 0:
		return fmt.Sprintf("at least %s left (not yet timed: %s)", d, strings.Join(untimed, ", "))
	}
	return fmt.Sprintf("time left not known yet (not yet timed: %s)", strings.Join(untimed, ", "))
}

// runningLines describes the running units, one line each, in the order
// of the run.
func (p *progress) runningLines() []string {
	var lines []string
	for _, u := range p.eta.order(p.units) {
		r := p.units[u]
		line := fmt.Sprintf("%s repeat %d fold %d", r.model, r.repeat, r.fold)
		if r.epoch > 0 {
			if r.member > 0 {
				line += fmt.Sprintf(", member %d", r.member)
			}
			line += fmt.Sprintf(", epoch %d: %s", r.epoch, lossWords(r.train, r.valid))
		}
		lines = append(lines, line)
	}
	return lines
}

// lossWords names the loss a person watches: the inner-validation loss
// when there is an inner validation part, else the training loss.
func lossWords(train, valid float64) string {
	if !math.IsNaN(valid) {
		return fmt.Sprintf("inner-validation loss %.4g (training loss %.4g)", valid, train)
	}
	return fmt.Sprintf("training loss %.4g (no inner validation part)", train)
}

// draw redraws the live area.
func (p *progress) draw(now time.Time) {
	var lines []string
	if p.perm != nil {
		e := p.perm
		lines = append(lines, fmt.Sprintf("%s %d/%d permutations, %s; now %s", bar(e.Finished, e.Total), e.Finished, e.Total,
			roundDuration(e.Elapsed), e.Model))
	} else {
		total := p.done.Total
		if total == 0 {
			total = p.eta.total()
		}
		left := p.left(now)
		if p.done.Finished == total {
			left = "done"
		}
		lines = append(lines, fmt.Sprintf("%s %d/%d units, %s, %s", bar(p.done.Finished, total), p.done.Finished, total,
			roundDuration(now.Sub(p.eta.began)), left))
		for _, l := range p.runningLines() {
			lines = append(lines, "  "+l)
		}
	}
	var b strings.Builder
	p.erase(&b)
	for _, l := range lines {
		b.WriteString(truncate(l, p.width-1) + "\n")
	}
	p.drawn = len(lines)
	io.WriteString(p.w, b.String())
}

// erase moves to the first line of the live area and clears it to the
// end of the screen.
func (p *progress) erase(b *strings.Builder) {
	if p.drawn > 0 {
		fmt.Fprintf(b, "\033[%dA", p.drawn)
	}
	b.WriteString("\r\033[J")
}

// clear removes the live area.
func (p *progress) clear() {
	if !p.live || p.drawn == 0 {
		return
	}
	var b strings.Builder
	p.erase(&b)
	p.drawn = 0
	io.WriteString(p.w, b.String())
}

// finish ends the display.
func (p *progress) finish() { p.clear() }

// bar draws done of total as a bar of 20 cells.
func bar(done, total int) string {
	const cells = 20
	full := 0
	if total > 0 {
		full = min(cells, done*cells/total)
	}
	return "[" + strings.Repeat("#", full) + strings.Repeat(".", cells-full) + "]"
}

// truncate cuts s to width characters, ending in "…" when cut.
func truncate(s string, width int) string {
	if utf8.RuneCountInString(s) <= width {
		return s
	}
	r := []rune(s)
	return string(r[:max(0, width-1)]) + "…"
}

// roundDuration rounds d to what a person reads: seconds under ten
// minutes, minutes above.
func roundDuration(d time.Duration) time.Duration {
	if d >= 10*time.Minute {
		return d.Round(time.Minute)
	}
	return d.Round(time.Second)
}

// estimate estimates the time left of a run from the units that have
// finished: per model, the mean time of its trained units (resumed ones
// take none), so that fast baselines do not make slow networks look
// fast. A model with units left none of which has finished is not timed,
// and the estimate is then only a lower bound. The work left, the mean
// time of each unit not started and what the mean leaves of each running
// one, is shared by the jobs.
type estimate struct {
	models    []string
	remaining map[string]int // units not finished, per model
	took      map[string][]time.Duration
	started   map[train.Unit]startedUnit
	jobs      int
	began     time.Time
}

// startedUnit is a running unit's model and start.
type startedUnit struct {
	model string
	at    time.Time
}

func newEstimate(models []string, unitsPerModel, jobs int) *estimate {
	e := &estimate{models: models, remaining: make(map[string]int), took: make(map[string][]time.Duration),
		started: make(map[train.Unit]startedUnit), jobs: max(1, jobs), began: time.Now()}
	for _, m := range models {
		e.remaining[m] += unitsPerModel
	}
	return e
}

func (e *estimate) total() int {
	n := 0
	for _, r := range e.remaining {
		n += r
	}
	return n
}

// start notes that unit u of model started at now.
func (e *estimate) start(u train.Unit, model string, now time.Time) {
	e.started[u] = startedUnit{model, now}
}

// finish notes that unit u of model finished at now, read from its
// checkpoint when resumed.
func (e *estimate) finish(u train.Unit, model string, resumed bool, now time.Time) {
	e.remaining[model]--
	if s, ok := e.started[u]; ok && !resumed {
		e.took[model] = append(e.took[model], now.Sub(s.at))
	}
	delete(e.started, u)
}

// left returns the estimated time left of the timed models and the
// models with units left that are not timed yet (the estimate is
// complete when there are none).
func (e *estimate) left(now time.Time) (time.Duration, []string) {
	var work time.Duration
	var untimed []string
	for _, m := range e.models {
		if e.remaining[m] <= 0 {
			continue
		}
		took := e.took[m]
		if len(took) == 0 {
			untimed = append(untimed, m)
			continue
		}
		var mean time.Duration
		for _, d := range took {
			mean += d
		}
		mean /= time.Duration(len(took))
		notStarted := e.remaining[m]
		for _, s := range e.started {
			if s.model == m {
				work += max(0, mean-now.Sub(s.at))
				notStarted--
			}
		}
		work += time.Duration(max(0, notStarted)) * mean
	}
	return work / time.Duration(e.jobs), untimed
}

// order returns the units of running in the run's order.
func (e *estimate) order(running map[train.Unit]*running) []train.Unit {
	units := make([]train.Unit, 0, len(running))
	for u := range running {
		units = append(units, u)
	}
	less := func(a, b train.Unit) int {
		for _, d := range []int{a.Model - b.Model, a.Repeat - b.Repeat, a.Fold - b.Fold} {
			if d != 0 {
				return d
			}
		}
		return 0
	}
	slices.SortFunc(units, less)
	return units
}
