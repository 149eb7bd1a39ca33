package experiment

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"os"
	"strconv"
	"strings"

	"github.com/skein-neuro/skein/train"
)

// writeSweep writes the ranking of the sweeps' variants by inner
// validation loss (RankSweep) as sweep.csv and as a section of
// summary.md. It writes nothing without sweeps.
func writeSweep(rd *RunDir, exp *Experiment, variants []Variant, res *train.Result) error {
	if len(variants) == 0 {
		return nil
	}
	ranks := RankSweep(variants, exp, res)
	var csvBuf bytes.Buffer
	w := csv.NewWriter(&csvBuf)
	w.Write([]string{"model", "variant", "rank", "inner_valid_loss", "units", "settings"})
	md := &strings.Builder{}
	md.WriteString("\n## Sweep\n\nVariants ranked by inner validation loss alone: the mean, over repeats × folds, of the validation loss " +
		"(standardized scores) of the epoch each network kept. The outer test folds never choose a setting; the variants' " +
		"test scores are in the tables above. Baselines have no inner validation loss and are not ranked.\n\n")
	md.WriteString("| model | rank | variant | inner validation loss | units |\n| --- | --- | --- | --- | --- |\n")
	for _, r := range ranks {
		rank, loss := "", ""
		mdRank, mdLoss := "not ranked", "n/a"
		if r.Rank > 0 {
			rank, loss = strconv.Itoa(r.Rank), strconv.FormatFloat(r.InnerLoss, 'g', -1, 64)
			mdRank, mdLoss = rank, strconv.FormatFloat(r.InnerLoss, 'g', 4, 64)
		}
		settings := make([]string, len(r.Keys))
		for i, k := range r.Keys {
			settings[i] = fmt.Sprintf("%s=%v", k, r.Values[i])
		}
		w.Write([]string{r.Base, r.Name, rank, loss, strconv.Itoa(r.Units), strings.Join(settings, ";")})
		cell := strings.NewReplacer("|", "\\|", "\n", " ").Replace
		fmt.Fprintf(md, "| %s | %s | %s | %s | %d |\n", cell(r.Base), mdRank, cell(r.Name), mdLoss, r.Units)
	}
	w.Flush()
	if err := w.Error(); err != nil {
		return err
	}
	if err := rd.WriteFile(SweepFile, csvBuf.Bytes()); err != nil {
		return err
	}
	summary, err := os.ReadFile(rd.WorkPath(SummaryFile))
	if err != nil {
		return err
	}
	return rd.WriteFile(SummaryFile, append(summary, md.String()...))
}
