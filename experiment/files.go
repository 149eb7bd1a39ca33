package experiment

// The files and folders of a run folder. Each is written by one function
// of this package and read back by one (see Folder), except the figures
// and report.html, which package experiment/report draws from the others.
const (
	// ExperimentFile is the experiment file with every default filled in
	// and sweeps expanded: what the run ran.
	ExperimentFile = "experiment.toml"
	// CohortFile is the cohort report of skein check --json.
	CohortFile = "cohort.json"
	// InputsFile lists every cohort file the run read with the SHA-256 of
	// its bytes (data.Cohort.Files, as JSON): a resumed run, a unit of a
	// plan or a merge refuses to go on when one changed.
	InputsFile = "inputs.json"
	// VersionsFile records what made the run: Go, the machine, the seed,
	// skein's and its modules' versions.
	VersionsFile = "versions.txt"
	// LogFile is the run's structured log, one JSON record a line.
	LogFile = "run.log"
	// RegionsFile holds the region labels, one a line in matrix order.
	RegionsFile = "regions.txt"
	// PredictionsFile holds every test prediction (eval.WritePredictions).
	PredictionsFile = "predictions.csv"
	// ClassPredictionsFile holds every test class probability of the
	// models fitted to class labels (eval.WriteClassPredictions).
	ClassPredictionsFile = "class_predictions.csv"
	// MetricsFile holds the metrics of every model and target
	// (eval.Summary's JSON).
	MetricsFile = "metrics.json"
	// SummaryFile is the summary a person reads (Report.WriteMarkdown).
	SummaryFile = "summary.md"
	// ComparisonFile holds the comparison of every model with the
	// reference baseline (eval.WriteComparisonCSV): pooled r within folds
	// and MAE with their bootstrap intervals, permutation p-values and
	// the corrected resampled t-tests, in the order of SummaryFile.
	ComparisonFile = "comparison.csv"
	// LearningFile holds the epochs of every iteratively trained unit:
	// model,repeat,fold,member,epoch,train_loss,valid_loss,best (repeat
	// and fold from 1 as in predictions.csv; member 0 for a single network,
	// else the ensemble member from 1, each with its own epochs; valid_loss
	// empty without inner validation; best is 1 on the epoch whose weights
	// were kept).
	LearningFile = "learning_curves.csv"
	// PermutationFile holds the null distributions of the permutation
	// test (eval.WriteNullCSV): permutation 0 is the observed run; with
	// class labels, an auc_within column holds each model × label's AUC
	// within folds (eval.AUCWithinFolds) under each permutation.
	PermutationFile = "permutations.csv"
	// SampleSizeFile holds the sample-size curve
	// (eval.WriteSampleSizeCSV).
	SampleSizeFile = "sample_size.csv"
	// SampleSizePlotFile draws SampleSizeFile; SampleSizeSVGFile is the
	// same plot as SVG.
	SampleSizePlotFile = "sample_size.png"
	SampleSizeSVGFile  = "sample_size.svg"
	// SweepFile ranks the variants of swept models.
	SweepFile = "sweep.csv"
	// DriftFile holds the comparison with an earlier run and the drift
	// verdict.
	DriftFile = "drift.md"
	// UnitsDir holds one checkpoint a finished unit (train.Checkpoints).
	UnitsDir = "units"
	// ModelsDir holds the saved fold models, NAME/rR-fF/.
	ModelsDir = "models"
	// FiguresDir holds the figures of the report.
	FiguresDir = "figures"
	// HTMLFile is the report.
	HTMLFile = "report.html"
	// ImportanceFile is the table of fold-averaged edge importance that
	// package experiment/report writes: one line per model, target, input
	// view, class (for a label) and edge i < j, with the columns
	//
	//	model,target,view,region_i,region_j,mean,sd,folds,same_sign,class
	//
	// view names the input whose edges the line is about (such as
	// "functional", "structural" or "branch 2: structural", see
	// train.ModelConfig.ImportanceViews; each view has lines of its own,
	// never summed with another's), region_i and region_j are labels,
	// mean and sd the mean and sample
	// SD (n − 1; empty for one fold) over the folds, same_sign the
	// fraction of folds whose importance has the sign of the mean. class
	// is empty for a score target. For a label (target names it) the
	// maps are of a classifier's decision value (model.ClassInterpreter)
	// and class names its class: for a binary label the positive class,
	// whose log-odds against the other class the maps explain; for more
	// classes one line per class, whose centred logit (log-probability
	// less the mean over the classes) they explain.
	ImportanceFile = "importance.csv"

	// The files of a batch plan (Plan), kept in the merged run folder.

	// PlanFile is what units and merge read back of the plan.
	PlanFile = "plan.json"
	// UnitsFile lists the units, for people and scripts.
	UnitsFile = "units.tsv"
	// JobFile is the SLURM job-array script.
	JobFile = "job.sh"
	// LogsDir holds one log a unit, and SLURM's output.
	LogsDir = "logs"
	// NullsDir holds the null scores of each permutation block.
	NullsDir = "nulls"
	// SampleSizeDir holds the sample-size rows of each curve unit.
	SampleSizeDir = "sample_size"
	// FailedDir holds FailedDir/K.txt, the error of failed unit K.
	FailedDir = "failed"
)
