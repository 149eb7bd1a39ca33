package main

import (
	"fmt"
	"io"
	"log/slog"
	"os"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"github.com/skein-neuro/skein/train"
)

// progress shows a run's progress: a live bar with the current fold, epoch
// and loss on a terminal; elsewhere (cron, nightly jobs) a plain log line
// at most once per interval, and one when the last unit finishes.
type progress struct {
	bar      *progressbar.ProgressBar // nil when not on a terminal
	log      *slog.Logger
	interval time.Duration
	last     time.Time
}

func newProgress(w io.Writer, log *slog.Logger, total int) *progress {
	p := &progress{log: log, interval: 15 * time.Second, last: time.Now()}
	if f, ok := w.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		p.bar = progressbar.NewOptions(total,
			progressbar.OptionSetWriter(w),
			progressbar.OptionSetDescription("starting"),
			progressbar.OptionShowCount(),
			progressbar.OptionSetPredictTime(true),
			progressbar.OptionSetElapsedTime(true),
			progressbar.OptionSetWidth(24),
			progressbar.OptionThrottle(200*time.Millisecond),
			progressbar.OptionClearOnFinish(),
		)
	}
	return p
}

// event is a train.Runner's OnEvent.
func (p *progress) event(e train.Event) {
	where := fmt.Sprintf("%s repeat %d fold %d", e.Model, e.Unit.Repeat+1, e.Unit.Fold+1)
	left := "unknown"
	if e.Finished > 0 {
		left = (e.Elapsed / time.Duration(e.Finished) * time.Duration(e.Total-e.Finished)).Round(time.Second).String()
	}
	switch e.Kind {
	case train.EpochDone:
		desc := fmt.Sprintf("%s epoch %d loss %.4g", where, e.Epoch.Epoch, e.Epoch.TrainLoss)
		if p.bar != nil {
			p.bar.Describe(desc)
			return
		}
		if time.Since(p.last) >= p.interval {
			p.last = time.Now()
			p.log.Info("training", "unit", where, "epoch", e.Epoch.Epoch, "train_loss", e.Epoch.TrainLoss,
				"valid_loss", e.Epoch.ValidLoss, "done", e.Finished, "of", e.Total, "left", left)
		}
	case train.UnitStarted:
		if p.bar != nil {
			p.bar.Describe(where)
		}
	case train.UnitFinished:
		if p.bar != nil {
			p.bar.Set(e.Finished)
			return
		}
		if e.Finished < e.Total && time.Since(p.last) < p.interval {
			return
		}
		p.last = time.Now()
		p.log.Info("unit finished", "unit", where, "resumed", e.Resumed, "done", e.Finished, "of", e.Total,
			"elapsed", e.Elapsed.Round(time.Second).String(), "left", left)
	}
}

func (p *progress) finish() {
	if p.bar != nil {
		p.bar.Finish()
	}
}
