// Package bench holds skein's whole-path benchmarks and the scripts of the
// side-by-side comparison (see README.md, section "Speed"):
//
//   - compare.sh trains the reference network through skein (pure-Go and
//     OpenBLAS builds) and through PyTorch, in alternating runs, times one
//     large OpenBLAS sgemm in the same alternation (refnet -sgemm), and
//     prints seconds per epoch, the ratios to PyTorch and to the
//     arithmetic floor;
//   - parallel.sh times a K-fold run of the reference network on one core
//     and on two with each kind of parallelism (the numbers behind
//     train.ChooseParallelism);
//   - scaling.sh prints epoch time, FLOP count and GFLOP/s against p and N;
//   - scenarios.sh runs cmd/scenarios: the baselines and a set of networks
//     on invented cohorts whose score follows a known truth (package
//     bench/scenario), one table per scenario beside the oracle r;
//   - labels.sh generates a cohort with two planted class labels and a
//     null one (skein synth --label) and runs labels.toml on it: the
//     classifying baselines and the recommended networks on the same
//     folds, with AUC intervals, the corrected t-test and a permutation
//     p-value;
//   - scale.sh times skein's ridge run (inner k-fold, efficient
//     leave-one-out, a 1000-permutation test) in both builds beside
//     scale_sklearn.py (scikit-learn's GridSearchCV and RidgeCV) on one
//     invented cohort, with peak memory;
//   - memory.sh prints the peak RSS of a ridge run against the size of the
//     cohort's matrices, for each cohort.storage ("float64", "float32"),
//     on a cohort from skein synth or, for N in the thousands and p in
//     the hundreds, from memory_cohort.py (float32 .npy files written one
//     at a time);
//   - cmd/refnet is the driver of compare.sh, parallel.sh and scaling.sh;
//   - BenchmarkRidgePermutation times the permutation test of a
//     cross-validated ridge at N = 275, p = 268.
//
// Nothing here runs in go test ./... without -bench.
package bench
