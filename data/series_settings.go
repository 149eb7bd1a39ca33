package data

import (
	"errors"
	"fmt"

	"github.com/skein-neuro/skein/internal/enum"
)

// Estimator is the value of the key estimator of a modality read from
// time series (series): the connectome each participant's series give.
// "" is unset (EstimatorCorrelation).
type Estimator string

// Estimators.
const (
	// EstimatorCorrelation is the Pearson correlation of the regions'
	// series (of the covariance Shrinkage chooses).
	EstimatorCorrelation Estimator = "correlation"
	// EstimatorPartial is the partial correlation, from the precision
	// matrix: ρ_ij = −P_ij / sqrt(P_ii P_jj), P the inverse covariance.
	EstimatorPartial Estimator = "partial"
	// EstimatorCovariance is the covariance itself (sample or shrunk).
	EstimatorCovariance Estimator = "covariance"
	// EstimatorTangent is the tangent-space embedding of the covariance at
	// a reference mean fitted on each training fold (train.TangentSpace):
	// the loader gives the covariances, the fold's preparation embeds
	// them.
	EstimatorTangent Estimator = "tangent"
)

// UnmarshalText sets e to the word text: "correlation", "partial",
// "covariance", "tangent" or "" (unset). Another word is an error listing
// these.
func (e *Estimator) UnmarshalText(text []byte) error {
	return enum.Parse(e, text, EstimatorCorrelation, EstimatorPartial, EstimatorCovariance, EstimatorTangent)
}

// MarshalText returns the word of e.
func (e Estimator) MarshalText() ([]byte, error) { return []byte(e), nil }

// String returns the word of e.
func (e Estimator) String() string { return string(e) }

// Shrinkage is the value of the key shrinkage: how each participant's
// covariance is estimated from its series. "" is unset (ShrinkageNone).
type Shrinkage string

// Shrinkage settings.
const (
	// ShrinkageNone is the sample covariance, (1/T) Σ_t (x_t − x̄)(x_t − x̄)ᵀ,
	// singular when T ≤ p.
	ShrinkageNone Shrinkage = "none"
	// ShrinkageLedoitWolf is the Ledoit & Wolf (2004) shrinkage of the
	// sample covariance towards a multiple of the identity, with the
	// intensity estimated from the series (connectivity.LedoitWolf);
	// positive definite whatever T.
	ShrinkageLedoitWolf Shrinkage = "ledoit_wolf"
)

// UnmarshalText sets s to the word text: "none", "ledoit_wolf" or ""
// (unset). Another word is an error listing these.
func (s *Shrinkage) UnmarshalText(text []byte) error {
	return enum.Parse(s, text, ShrinkageNone, ShrinkageLedoitWolf)
}

// MarshalText returns the word of s.
func (s Shrinkage) MarshalText() ([]byte, error) { return []byte(s), nil }

// String returns the word of s.
func (s Shrinkage) String() string { return string(s) }

// TangentMean is the value of the key tangent_mean: the reference of the
// tangent space. "" is unset (TangentGeometric).
type TangentMean string

// Reference means of a tangent space.
const (
	// TangentGeometric is the affine-invariant (geometric) mean of the
	// training covariances (connectivity.GeometricMean).
	TangentGeometric TangentMean = "geometric"
	// TangentLogEuclidean is the log-Euclidean mean
	// exp((1/n) Σ log C_i) (connectivity.LogEuclideanMean), cheaper: no
	// iteration.
	TangentLogEuclidean TangentMean = "log_euclidean"
)

// UnmarshalText sets m to the word text: "geometric", "log_euclidean" or
// "" (unset). Another word is an error listing these.
func (m *TangentMean) UnmarshalText(text []byte) error {
	return enum.Parse(m, text, TangentGeometric, TangentLogEuclidean)
}

// MarshalText returns the word of m.
func (m TangentMean) MarshalText() ([]byte, error) { return []byte(m), nil }

// String returns the word of m.
func (m TangentMean) String() string { return string(m) }

// TangentDiagonal is the value of the key tangent_diagonal: whether the
// tangent matrices keep their diagonal. "" is unset (DiagonalDrop).
type TangentDiagonal string

// Diagonal settings of a tangent space.
const (
	// DiagonalDrop sets the diagonal of each tangent matrix to 0: the
	// vectorisation is the p(p−1)/2 entries √2 t_ij, i < j.
	DiagonalDrop TangentDiagonal = "drop"
	// DiagonalKeep keeps t_ii on the diagonal of each tangent matrix, for
	// models that read the diagonal; the baselines read a matrix's edges
	// i < j only, and a network's per-edge standardization (EdgeScaler)
	// zeroes the diagonal.
	DiagonalKeep TangentDiagonal = "keep"
)

// UnmarshalText sets d to the word text: "drop", "keep" or "" (unset).
// Another word is an error listing these.
func (d *TangentDiagonal) UnmarshalText(text []byte) error {
	return enum.Parse(d, text, DiagonalDrop, DiagonalKeep)
}

// MarshalText returns the word of d.
func (d TangentDiagonal) MarshalText() ([]byte, error) { return []byte(d), nil }

// String returns the word of d.
func (d TangentDiagonal) String() string { return string(d) }

// SeriesSettings says how a cohort's functional matrices were estimated
// from regional time series: the keys of [cohort.functional] with series,
// defaults filled. Cohort.Series carries it to the fold's preparation,
// which embeds covariances in a tangent space when Estimator is
// EstimatorTangent.
type SeriesSettings struct {
	Estimator       Estimator       `json:"estimator"`
	Shrinkage       Shrinkage       `json:"shrinkage"`
	TangentMean     TangentMean     `json:"tangent_mean,omitempty"`
	TangentDiagonal TangentDiagonal `json:"tangent_diagonal,omitempty"`
}

// Settings returns m's series settings with defaults filled, or nil when
// m is not read from time series.
func (m *Modality) Settings() *SeriesSettings {
	if m == nil || m.Series == "" {
		return nil
	}
	s := &SeriesSettings{Estimator: m.Estimator, Shrinkage: m.Shrinkage}
	if s.Estimator == "" {
		s.Estimator = EstimatorCorrelation
	}
	if s.Shrinkage == "" {
		s.Shrinkage = ShrinkageNone
	}
	if s.Estimator == EstimatorTangent {
		s.TangentMean, s.TangentDiagonal = m.TangentMean, m.TangentDiagonal
		if s.TangentMean == "" {
			s.TangentMean = TangentGeometric
		}
		if s.TangentDiagonal == "" {
			s.TangentDiagonal = DiagonalDrop
		}
	}
	return s
}

// validateSeries checks the series keys of modality key (cohort.functional
// or cohort.structural).
func (m Modality) validateSeries(key string) error {
	if m.Series == "" {
		for _, k := range []struct {
			name string
			set  bool
		}{{"estimator", m.Estimator != ""}, {"shrinkage", m.Shrinkage != ""}, {"tangent_mean", m.TangentMean != ""}, {"tangent_diagonal", m.TangentDiagonal != ""}} {
			if k.set {
				return fmt.Errorf(`%s.%s: goes with "series" (regional time series), not with matrices`, key, k.name)
			}
		}
		return nil
	}
	if key != "cohort.functional" {
		return fmt.Errorf(`%s.series: time series give functional connectomes; set it in [cohort.functional]`, key)
	}
	if m.Files != "" || m.Stack != "" {
		return fmt.Errorf(`%s: set one of "files", "stack" or "series"`, key)
	}
	if m.Values != "" {
		return fmt.Errorf(`%s.values: matrices estimated from series are not range-checked; remove the key`, key)
	}
	if err := checkTemplate(key+".series", m.Series); err != nil {
		return err
	}
	for _, err := range []error{enum.Check(m.Estimator), enum.Check(m.Shrinkage), enum.Check(m.TangentMean), enum.Check(m.TangentDiagonal)} {
		if err != nil {
			var e *enum.Error
			if errors.As(err, &e) {
				return fmt.Errorf("%s: %w", key+"."+seriesKeyOf(m, e.Found), err)
			}
			return fmt.Errorf("%s: %w", key, err)
		}
	}
	if m.Estimator != EstimatorTangent && (m.TangentMean != "" || m.TangentDiagonal != "") {
		return fmt.Errorf(`%s: tangent_mean and tangent_diagonal go with estimator = %q`, key, EstimatorTangent)
	}
	return nil
}

// seriesKeyOf names the key of m holding the word found.
func seriesKeyOf(m Modality, found string) string {
	switch found {
	case string(m.Estimator):
		return "estimator"
	case string(m.Shrinkage):
		return "shrinkage"
	case string(m.TangentMean):
		return "tangent_mean"
	}
	return "tangent_diagonal"
}
