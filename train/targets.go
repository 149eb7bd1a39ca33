package train

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// TargetPrep is everything about the scores that is fitted on a training
// fold and then applied, unchanged, to both sides of the fold: the
// regression of confounds out of every score (cross-validated confound
// regression, Snoek, Miletić & Scholte 2019) and the standardization of
// the residual scores.
//
// For target t and participant i with covariates c_i, the model learns
//
//	z_it = (y_it − β_t·[1, c_i] − μ_t) / σ_t
//
// where β_t is the least-squares fit of y_t on [1, c] over the training
// rows (β_t = 0 without confounds) and μ_t, σ_t are the mean and SD of the
// residuals over the training rows. Missing scores (NaN) are left out of
// every fit; a missing covariate is replaced by its training mean.
//
// A TargetPrep fitted in B blocks (FitTargetPrepBlocks) holds B
// independent problems side by side, as a permutation test fits them: y
// has T·B columns and cov C·B, and target column t is regressed on
// covariate block b = t / T only (columns b·C to b·C + C − 1), so c_i
// above is participant i's covariates of block b.
//
// A TargetPrep works on score and covariate matrices (FitTargetPrep,
// Standardized, Observed, Unstandardize) and is also the preparation step
// "targets" of a Pipeline (a Residualizer): set Covariates and Blocks,
// then Fit on a cohort's training participants; Apply replaces the scores
// by z, Residual gives y − β·[1, c], Unscale maps predictions of z back
// onto that residual scale (z·σ + μ) and Invert onto score units
// (z·σ + μ + β·[1, c]).
type TargetPrep struct {
	// Covariates names the cohort covariates regressed out of the scores
	// (cv.confounds), C·B of them fitted in B blocks, block after block;
	// nil for none. Fit reads it; the matrix functions leave it nil.
	Covariates []string
	// Blocks is B; 0 means 1.
	Blocks int
	// Confounds holds (1 + C) × T coefficients, row 0 the intercept; nil
	// without confound regression. Fitted in blocks, row 1 + c of target
	// column t belongs to covariate c of the target's block.
	Confounds *mat.Dense
	// CovariateMean holds the training means of the confound columns
	// (C, or C·B fitted in blocks), used to fill missing covariates.
	CovariateMean []float64
	// Mean and SD standardize each target's residuals.
	Mean []float64
	SD   []float64
	// SiteLevels, set when the site is among the confounds
	// (cv.site_confound), lists the cohort's sites, sorted: the covariates
	// "site=NAME" are the one-hot columns of every site but the first.
	// New participants (skein predict) get these columns from their site
	// (AddSiteColumns).
	SiteLevels []string
}

// FitTargetPrep fits a TargetPrep on the given rows of y (n × T, NaN where
// missing) and cov (n × C confound columns; nil for none). It is
// FitTargetPrepBlocks with one block.
func FitTargetPrep(y, cov *mat.Dense, rows []int) (*TargetPrep, error) {
	return FitTargetPrepBlocks(y, cov, rows, 1)
}

// FitTargetPrepBlocks fits a TargetPrep on the given rows of y (n × T·B,
// NaN where missing) and cov (n × C·B; nil for none) made of B blocks side
// by side: target column t is regressed on covariate columns b·C to
// b·C + C − 1 with b = t / T, and standardized on its own. The result is
// that of B separate FitTargetPrep calls, one per block, with their
// columns side by side; B = 1 is FitTargetPrep. It is how a permutation
// test fits a chunk of permutations at once, each with its own permuted
// covariates. The number of columns of y and of cov must be multiples of
// blocks.
func FitTargetPrepBlocks(y, cov *mat.Dense, rows []int, blocks int) (*TargetPrep, error) {
	_, T := y.Dims()
	if blocks < 1 || T%blocks != 0 {
		return nil, fmt.Errorf("%d score columns do not make %d blocks", T, blocks)
	}
	tp := &TargetPrep{Blocks: blocks, Mean: make([]float64, T), SD: make([]float64, T)}
	if cov != nil {
		if _, C := cov.Dims(); C%blocks != 0 {
			return nil, fmt.Errorf("%d confound columns do not make %d blocks", C, blocks)
		}
		if err := tp.fitConfounds(y, cov, rows); err != nil {
			return nil, err
		}
	}
	for t := 0; t < T; t++ {
		var sum, sumSq float64
		var n int
		for _, i := range rows {
			v := tp.residual(y, cov, i, t)
			if math.IsNaN(v) {
				continue
			}
			sum += v
			n++
		}
		if n < 2 {
			return nil, fmt.Errorf("target %d: %d training scores, need at least 2", t, n)
		}
		mean := sum / float64(n)
		for _, i := range rows {
			if v := tp.residual(y, cov, i, t); !math.IsNaN(v) {
				sumSq += (v - mean) * (v - mean)
			}
		}
		sd := math.Sqrt(sumSq / float64(n-1))
		if sd == 0 {
			return nil, fmt.Errorf("target %d: every training score is the same", t)
		}
		tp.Mean[t], tp.SD[t] = mean, sd
	}
	return tp, nil
}

func (tp *TargetPrep) fitConfounds(y, cov *mat.Dense, rows []int) error {
	_, T := y.Dims()
	_, CB := cov.Dims()
	C := CB / tp.numBlocks()
	tp.CovariateMean = make([]float64, CB)
	for c := 0; c < CB; c++ {
		var sum float64
		var n int
		for _, i := range rows {
			if v := cov.At(i, c); !math.IsNaN(v) {
				sum += v
				n++
			}
		}
		if n == 0 {
			return fmt.Errorf("confound %d: no training participant has a value", c)
		}
		tp.CovariateMean[c] = sum / float64(n)
	}
	tp.Confounds = mat.NewDense(1+C, T, nil)
	for t := 0; t < T; t++ {
		var present []int
		for _, i := range rows {
			if !math.IsNaN(y.At(i, t)) {
				present = append(present, i)
			}
		}
		if len(present) <= C+1 {
			return fmt.Errorf("target %d: %d training scores for %d confounds", t, len(present), C)
		}
		design := mat.NewDense(len(present), 1+C, nil)
		obs := mat.NewVecDense(len(present), nil)
		first := tp.firstCovariate(t, T)
		for r, i := range present {
			design.Set(r, 0, 1)
			for c := 0; c < C; c++ {
				design.Set(r, 1+c, tp.covariate(cov, i, first+c))
			}
			obs.SetVec(r, y.At(i, t))
		}
		var beta mat.VecDense
		if err := beta.SolveVec(design, obs); err != nil {
			return fmt.Errorf("target %d: confound regression: %w", t, err)
		}
		tp.Confounds.SetCol(t, beta.RawVector().Data)
	}
	return nil
}

func (tp *TargetPrep) numBlocks() int { return max(1, tp.Blocks) }

// firstCovariate returns the first covariate column of the block of
// target column t of T.
func (tp *TargetPrep) firstCovariate(t, T int) int {
	B := tp.numBlocks()
	return t / (T / B) * (len(tp.CovariateMean) / B)
}

func (tp *TargetPrep) covariate(cov *mat.Dense, i, c int) float64 {
	if v := cov.At(i, c); !math.IsNaN(v) {
		return v
	}
	return tp.CovariateMean[c]
}

// residual returns y_it minus its confound fit.
func (tp *TargetPrep) residual(y, cov *mat.Dense, i, t int) float64 {
	v := y.At(i, t)
	if tp.Confounds == nil || math.IsNaN(v) {
		return v
	}
	C := len(tp.CovariateMean) / tp.numBlocks()
	first := tp.firstCovariate(t, len(tp.Mean))
	v -= tp.Confounds.At(0, t)
	for c := 0; c < C; c++ {
		v -= tp.Confounds.At(1+c, t) * tp.covariate(cov, i, first+c)
	}
	return v
}

// Observed returns the rows' scores in score units with the confound fit
// removed: what the models' predictions are compared with.
func (tp *TargetPrep) Observed(y, cov *mat.Dense, rows []int) *mat.Dense {
	_, T := y.Dims()
	out := mat.NewDense(len(rows), T, nil)
	for r, i := range rows {
		for t := 0; t < T; t++ {
			out.Set(r, t, tp.residual(y, cov, i, t))
		}
	}
	return out
}

// Standardized returns the rows' scores as the models learn them.
func (tp *TargetPrep) Standardized(y, cov *mat.Dense, rows []int) *mat.Dense {
	out := tp.Observed(y, cov, rows)
	r, T := out.Dims()
	for i := 0; i < r; i++ {
		for t := 0; t < T; t++ {
			out.Set(i, t, (out.At(i, t)-tp.Mean[t])/tp.SD[t])
		}
	}
	return out
}

// Unstandardize turns standardized predictions back into score units, in
// place.
func (tp *TargetPrep) Unstandardize(pred *mat.Dense) {
	r, T := pred.Dims()
	for i := 0; i < r; i++ {
		for t := 0; t < T; t++ {
			pred.Set(i, t, pred.At(i, t)*tp.SD[t]+tp.Mean[t])
		}
	}
}

// targetPrepName is the Name of a TargetPrep step.
const targetPrepName = "targets"

// Name returns "targets".
func (tp *TargetPrep) Name() string { return targetPrepName }

// Fit fits tp on the participants of train, as FitTargetPrepBlocks fits
// their scores (one column per train.Targets entry) and the covariates
// that tp.Covariates names, in tp.Blocks blocks. It keeps tp.Covariates
// and tp.Blocks and replaces every fitted field.
func (tp *TargetPrep) Fit(train *data.Cohort) error {
	n, T := len(train.Participants), len(train.Targets)
	if n == 0 || T == 0 {
		return fmt.Errorf("%d training participants and %d targets", n, T)
	}
	y, err := scoreMatrix(train, T)
	if err != nil {
		return err
	}
	var cov *mat.Dense
	if len(tp.Covariates) > 0 {
		if cov, err = covariateMatrix(train, tp.Covariates); err != nil {
			return fmt.Errorf("confound regression: %w", err)
		}
	}
	rows := make([]int, n)
	for i := range rows {
		rows[i] = i
	}
	fitted, err := FitTargetPrepBlocks(y, cov, rows, tp.numBlocks())
	if err != nil {
		return err
	}
	tp.Confounds, tp.CovariateMean, tp.Mean, tp.SD = fitted.Confounds, fitted.CovariateMean, fitted.Mean, fitted.SD
	return nil
}

// Apply returns c with each participant's scores replaced by the
// standardized residual scores z (Standardized). A participant without
// scores (a cohort to predict) is returned without scores; one with as
// many scores as tp has targets must have the covariates tp regresses
// out.
func (tp *TargetPrep) Apply(c *data.Cohort) (*data.Cohort, error) {
	y, cov, scored, err := tp.matrices(c)
	if err != nil {
		return nil, err
	}
	out := *c
	out.Participants = make([]*data.Participant, len(c.Participants))
	for i, p := range c.Participants {
		q := *p
		out.Participants[i] = &q
	}
	if len(scored) == 0 {
		return &out, nil
	}
	z := tp.Standardized(y, cov, scored)
	for r, i := range scored {
		out.Participants[i].Scores = mat.Row(nil, r, z)
	}
	return &out, nil
}

// Residual returns the scores of c with the confound fit removed,
// y − β·[1, c] in score units (Observed): what predictions are scored
// against. Its rows follow c.Participants, of which there must be at
// least one; a participant without scores has a row of NaN.
func (tp *TargetPrep) Residual(c *data.Cohort) (*mat.Dense, error) {
	if len(c.Participants) == 0 {
		return nil, errors.New("no participants")
	}
	y, cov, scored, err := tp.matrices(c)
	if err != nil {
		return nil, err
	}
	out := mat.NewDense(len(c.Participants), len(tp.Mean), nil)
	for i := range c.Participants {
		for t := range tp.Mean {
			out.Set(i, t, math.NaN())
		}
	}
	if len(scored) > 0 {
		res := tp.Observed(y, cov, scored)
		for r, i := range scored {
			out.SetRow(i, res.RawRowView(r))
		}
	}
	return out, nil
}

// Unscale maps pred, predictions of z for the participants of c, onto the
// residual scale, z·σ + μ (Unstandardize), in place.
func (tp *TargetPrep) Unscale(c *data.Cohort, pred *mat.Dense) error {
	if err := tp.checkPredictions(c, pred); err != nil {
		return err
	}
	tp.Unstandardize(pred)
	return nil
}

// Invert maps pred, predictions of z for the participants of c, onto
// score units, z·σ + μ + β·[1, c], in place; a missing covariate takes its
// training mean.
func (tp *TargetPrep) Invert(c *data.Cohort, pred *mat.Dense) error {
	if err := tp.Unscale(c, pred); err != nil {
		return err
	}
	if tp.Confounds == nil {
		return nil
	}
	cov, err := tp.covariates(c)
	if err != nil {
		return err
	}
	for i := range c.Participants {
		for t := range tp.Mean {
			pred.Set(i, t, pred.At(i, t)+tp.confoundFit(cov, i, t))
		}
	}
	return nil
}

// confoundFit returns β_t·[1, c_i], participant i's confound fit of
// target column t.
func (tp *TargetPrep) confoundFit(cov *mat.Dense, i, t int) float64 {
	C := len(tp.CovariateMean) / tp.numBlocks()
	first := tp.firstCovariate(t, len(tp.Mean))
	fit := tp.Confounds.At(0, t)
	for c := 0; c < C; c++ {
		fit += tp.Confounds.At(1+c, t) * tp.covariate(cov, i, first+c)
	}
	return fit
}

func (tp *TargetPrep) checkPredictions(c *data.Cohort, pred *mat.Dense) error {
	if r, cols := pred.Dims(); r != len(c.Participants) || cols != len(tp.Mean) {
		return fmt.Errorf("predictions are %d × %d, want %d participants × %d targets", r, cols, len(c.Participants), len(tp.Mean))
	}
	return nil
}

// matrices returns the scores of c (NaN rows for participants without
// scores), its covariates tp regresses out (nil for none) and the rows of
// the participants with scores.
func (tp *TargetPrep) matrices(c *data.Cohort) (y, cov *mat.Dense, scored []int, err error) {
	T := len(tp.Mean)
	if T == 0 {
		return nil, nil, nil, errors.New("not fitted")
	}
	for i, p := range c.Participants {
		switch len(p.Scores) {
		case 0:
		case T:
			scored = append(scored, i)
		default:
			return nil, nil, nil, fmt.Errorf("participant %s has %d scores, fitted for %d targets", p.ID, len(p.Scores), T)
		}
	}
	if len(scored) == 0 {
		return nil, nil, nil, nil
	}
	y = mat.NewDense(len(c.Participants), T, nil)
	for i, p := range c.Participants {
		if len(p.Scores) == 0 {
			for t := 0; t < T; t++ {
				y.Set(i, t, math.NaN())
			}
			continue
		}
		y.SetRow(i, p.Scores)
	}
	if tp.Confounds != nil {
		if cov, err = tp.covariates(c); err != nil {
			return nil, nil, nil, err
		}
	}
	return y, cov, scored, nil
}

// covariates returns the covariates tp regresses out, of every participant
// of c.
func (tp *TargetPrep) covariates(c *data.Cohort) (*mat.Dense, error) {
	if len(tp.Covariates) != len(tp.CovariateMean) {
		return nil, fmt.Errorf("confound coefficients for %d covariates, with %d covariate names", len(tp.CovariateMean), len(tp.Covariates))
	}
	if len(c.Participants) == 0 {
		return nil, nil
	}
	cov, err := covariateMatrix(c, tp.Covariates)
	if err != nil {
		return nil, fmt.Errorf("confound regression: %w", err)
	}
	return cov, nil
}

// targetPrepJSON is the JSON encoding of a TargetPrep.
type targetPrepJSON struct {
	Covariates    []string    `json:"covariates,omitempty"`
	Blocks        int         `json:"blocks"`
	ConfoundCoef  [][]float64 `json:"confound_coef,omitempty"`
	CovariateMean []float64   `json:"covariate_mean,omitempty"`
	Mean          []float64   `json:"mean"`
	SD            []float64   `json:"sd"`
	SiteLevels    []string    `json:"site_levels,omitempty"`
}

// MarshalJSON encodes tp as a JSON object: covariates (Covariates),
// blocks (B), confound_coef (the 1 + C rows of Confounds, intercept
// first), covariate_mean, mean, sd and site_levels (SiteLevels, when set).
func (tp *TargetPrep) MarshalJSON() ([]byte, error) {
	j := targetPrepJSON{Covariates: tp.Covariates, Blocks: tp.numBlocks(), CovariateMean: tp.CovariateMean, Mean: tp.Mean, SD: tp.SD, SiteLevels: tp.SiteLevels}
	if tp.Confounds != nil {
		r, _ := tp.Confounds.Dims()
		for i := 0; i < r; i++ {
			j.ConfoundCoef = append(j.ConfoundCoef, tp.Confounds.RawRowView(i))
		}
	}
	return json.Marshal(j)
}

// UnmarshalJSON decodes what MarshalJSON encodes into tp, after checking
// that its parts fit together; the error names the key at fault.
func (tp *TargetPrep) UnmarshalJSON(raw []byte) error {
	var j targetPrepJSON
	if err := json.Unmarshal(raw, &j); err != nil {
		return err
	}
	decoded, err := j.targetPrep()
	if err != nil {
		return err
	}
	*tp = *decoded
	return nil
}

// targetPrep checks j and returns its TargetPrep.
func (j *targetPrepJSON) targetPrep() (*TargetPrep, error) {
	T, B, CB := len(j.Mean), max(1, j.Blocks), len(j.Covariates)
	switch {
	case T == 0:
		return nil, errors.New("mean: no targets")
	case len(j.SD) != T:
		return nil, fmt.Errorf("sd has %d values, mean %d", len(j.SD), T)
	case j.Blocks < 0 || T%B != 0:
		return nil, fmt.Errorf("blocks: %d targets do not make %d blocks", T, j.Blocks)
	case CB%B != 0:
		return nil, fmt.Errorf("covariates: %d names do not make %d blocks", CB, B)
	case len(j.CovariateMean) != CB:
		return nil, fmt.Errorf("covariate_mean has %d values for %d covariates", len(j.CovariateMean), CB)
	case CB == 0 && len(j.ConfoundCoef) > 0:
		return nil, errors.New("confound_coef without covariates")
	case CB > 0 && len(j.ConfoundCoef) != 1+CB/B:
		return nil, fmt.Errorf("confound_coef has %d rows, want %d (intercept and %d covariates)", len(j.ConfoundCoef), 1+CB/B, CB/B)
	}
	for t, sd := range j.SD {
		if !(sd > 0) || math.IsInf(sd, 0) {
			return nil, fmt.Errorf("sd[%d] is %v, want a positive number", t, sd)
		}
	}
	tp := &TargetPrep{Covariates: j.Covariates, Blocks: B, CovariateMean: j.CovariateMean, Mean: j.Mean, SD: j.SD, SiteLevels: j.SiteLevels}
	if CB > 0 {
		tp.Confounds = mat.NewDense(len(j.ConfoundCoef), T, nil)
		for i, row := range j.ConfoundCoef {
			if len(row) != T {
				return nil, fmt.Errorf("confound_coef row %d has %d values, want %d", i, len(row), T)
			}
			tp.Confounds.SetRow(i, row)
		}
	}
	return tp, nil
}
