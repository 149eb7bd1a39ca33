package experiment

import (
	"bytes"
	"fmt"
	"path/filepath"
	"time"
)

// ReadAgainst reads the earlier run folder dir that a run will be compared
// with (RunOptions.Against), following a link such as "latest" to the run
// it names, so that a wrong folder fails before anything is trained.
func ReadAgainst(dir string) (*Folder, error) {
	if real, err := filepath.EvalSymlinks(dir); err == nil {
		dir = real
	}
	prev, err := ReadFolder(dir)
	if err != nil {
		return nil, badInputf("--against: %w", err)
	}
	return prev, nil
}

// writeNightly adds to the work folder of rd the plot of the sample-size
// curve and, with an earlier run, DriftFile: the drift verdict and the
// comparison. It returns the verdict (nil without an earlier run).
func writeNightly(rd *RunDir, report *Report, prev *Folder, rule Drift) (*DriftReport, error) {
	if report.SampleSize != nil {
		var png, svg bytes.Buffer
		if err := PlotSampleSize(&png, &svg, report.SampleSize); err != nil {
			return nil, fmt.Errorf("sample-size plot: %w", err)
		}
		if err := rd.WriteFile(SampleSizePlotFile, png.Bytes()); err != nil {
			return nil, err
		}
		if err := rd.WriteFile(SampleSizeSVGFile, svg.Bytes()); err != nil {
			return nil, err
		}
	}
	if prev == nil {
		return nil, nil
	}
	cur, err := ReadFolder(rd.Partial)
	if err != nil {
		return nil, err
	}
	cur.Dir = rd.Final
	verdict := CheckDrift(rule, prev, cur)
	var md bytes.Buffer
	fmt.Fprintf(&md, "# Drift against %s\n\n", prev.Dir)
	switch {
	case !rule.Enabled():
		md.WriteString("The experiment has no [drift] rule.\n")
	case len(verdict.Breaks) == 0:
		md.WriteString("The rerun keeps to the experiment's [drift] rule.\n")
	default:
		md.WriteString("The rerun **broke** the experiment's [drift] rule:\n\n")
		for _, b := range verdict.Breaks {
			fmt.Fprintf(&md, "- %s\n", b)
		}
	}
	if len(verdict.Unchecked) > 0 {
		md.WriteString("\nNot checked:\n\n")
		for _, u := range verdict.Unchecked {
			fmt.Fprintf(&md, "- %s\n", u)
		}
	}
	md.WriteString("\n")
	if err := CompareRuns(prev, cur).WriteMarkdown(&md); err != nil {
		return nil, err
	}
	return verdict, rd.WriteFile(DriftFile, md.Bytes())
}

// RecordHistory appends the headline figures of the committed run folder
// final, a run of the experiment file at expPath, to the history file at
// path ("" means DefaultHistory(expPath): NAME.history.csv beside the
// experiment file) and redraws its plot; it returns the path used. Rows
// record the experiment file's absolute path, so that a history shared by
// several experiments never joins their runs on one line of the plot.
func RecordHistory(expPath, final, path string) (string, error) {
	if path == "" {
		path = DefaultHistory(expPath)
	}
	abs, err := filepath.Abs(expPath)
	if err != nil {
		return path, err
	}
	cur, err := ReadFolder(final)
	if err != nil {
		return path, err
	}
	if err := UpdateHistory(path, abs, cur, time.Now()); err != nil {
		return path, fmt.Errorf("history (the run itself is complete in %s): %w", final, err)
	}
	return path, nil
}
