package data

import "gonum.org/v1/gonum/mat"

// Participant is one participant's checked and preprocessed record.
type Participant struct {
	// ID is the participant_id of the participants table.
	ID string
	// Group is the participant's value in the grouping column (family or
	// scanning site); it is "" when the cohort has no grouping column.
	Group string
	// Site is the participant's value in the site column (cohort.site);
	// "" when the cohort has none.
	Site string
	// Functional is the p × p functional connectome after preprocessing
	// (for example Fisher z with a zero diagonal); nil when the cohort has no
	// functional modality.
	Functional *mat.Dense
	// Structural is the p × p structural connectome after preprocessing
	// (for example log1p and scaling); nil when the cohort has no structural
	// modality.
	Structural *mat.Dense
	// Compact holds the preprocessed matrices as float32 upper triangles
	// when the cohort was checked with cohort.storage = "float32"; then
	// Functional and Structural are nil. It is nil otherwise. Read a
	// matrix whichever way it is stored with FunctionalMatrix and
	// StructuralMatrix.
	Compact *Compact
	// Scores holds one value per Cohort.Targets entry, NaN where missing.
	Scores []float64
	// Covariates holds one value per Cohort.Covariates entry, NaN where
	// missing. Text covariates such as sex are coded as numbers.
	Covariates []float64
	// Labels holds one class per Cohort.Labels entry: an index into that
	// label's Cohort.Classes, or −1 where the label is missing.
	Labels []int
}

// Exclusion records a participant left out of the cohort and why.
type Exclusion struct {
	ID     string `json:"participant_id"`
	Reason string `json:"reason"`
}

// Cohort is the set of participants that passed every check, with the
// names that give meaning to their slices.
type Cohort struct {
	Participants []*Participant
	// Targets names the scores, in the order of Participant.Scores.
	Targets []string
	// Covariates names the covariates, in the order of Participant.Covariates.
	Covariates []string
	// Labels names the categorical targets (class labels such as a
	// diagnosis), in the order of Participant.Labels.
	Labels []string
	// Classes holds, for each entry of Labels, the names of its classes
	// (at least two) in their order: a participant's class k is
	// Classes[l][k]. For a binary label the class at index 1 is the
	// positive class that sensitivity and the ROC curve are about.
	Classes [][]string
	// Regions holds the p region labels, in matrix order.
	Regions []string
	// SiteColumn names the participants table's site column (cohort.site)
	// for messages; "" when the cohort has none or was not read from a
	// table.
	SiteColumn string
	// Excluded lists every participant that was left out, with its reason.
	Excluded []Exclusion
	// Series, when the functional matrices were estimated from regional
	// time series (cohort.functional.series), says how; nil when they were
	// read as matrices. With Series.Estimator = EstimatorTangent each
	// Functional matrix is the participant's p × p covariance, which the
	// fold's preparation embeds in a tangent space fitted on the training
	// participants (train.TangentSpace).
	Series *SeriesSettings
	// Files lists every file Check read, in the order read, with the
	// SHA-256 of its bytes: the participants table, the region labels,
	// each stack and its participant list, each included participant's
	// matrices. A run keeps them to tell whether its inputs changed.
	Files []FileDigest
}

// FileDigest is a file Check read and the SHA-256 of its bytes.
type FileDigest struct {
	// Path is the file as written in the experiment file's terms:
	// relative to the experiment file's folder unless it was given as an
	// absolute path.
	Path string `json:"path"`
	// SHA256 is the digest of the file's bytes, in lower-case hex.
	SHA256 string `json:"sha256"`
}

// P returns the number of regions.
func (c *Cohort) P() int { return len(c.Regions) }

// GroupIndices gathers the indices 0..len(labels)−1 by label, groups in
// order of first appearance and indices ascending within a group; an
// empty label stands alone. It is how participants sharing a family, a
// site or an identity are kept together when folds or resamples are
// drawn.
func GroupIndices(labels []string) [][]int {
	var groups [][]int
	index := make(map[string]int)
	for i, label := range labels {
		if label == "" {
			groups = append(groups, []int{i})
			continue
		}
		g, ok := index[label]
		if !ok {
			g = len(groups)
			index[label] = g
			groups = append(groups, nil)
		}
		groups[g] = append(groups[g], i)
	}
	return groups
}
