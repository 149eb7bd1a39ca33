package train

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"

	"github.com/skein-neuro/skein/data"
)

// Split is one cross-validation fold of one repeat: indices into the
// cohort's participants, each sorted ascending.
type Split struct {
	Repeat int // 0-based
	Fold   int // 0-based
	Train  []int
	Test   []int
}

// Folds says how to cut n participants into repeated k-fold splits.
type Folds struct {
	// K is the number of folds, at least 2.
	K int
	// Repeats is the number of times the whole k-fold cut is redone with a
	// fresh shuffle, at least 1.
	Repeats int
	// Seed makes the shuffles reproducible.
	Seed uint64
	// Groups, when not nil, holds one label per participant; participants
	// sharing a label (a family, a site) always fall in the same fold, so
	// a group is never split across training and test.
	Groups []string
	// Strata, when not nil, holds one value per participant (a target;
	// NaN where missing) and asks for folds balanced on its quantiles.
	Strata []float64
	// Classes, when not nil, holds one class per participant (an index
	// 0..K−1 of a label; −1 where missing, which is a stratum of its own)
	// and asks for folds stratified by class exactly: without Groups,
	// every class is dealt round the folds in turn, so each fold holds
	// ⌊n_c/K⌋ or ⌈n_c/K⌉ of the n_c participants of class c; with Groups,
	// whole groups are placed as evenly as they allow (see Splits). It
	// takes the place of Strata, which is not read when Classes is set.
	Classes []int
	// Sites, when not nil, holds one site label per participant. With
	// SitesOut = 0 it balances the folds on site: units are ordered by
	// site (then by stratum, with Strata) and dealt in blocks of K, so
	// each site's participants spread evenly over the folds.
	Sites []string
	// SitesOut, when above 0, makes the splits leave-k-sites-out with
	// k = SitesOut (Sites must be set): each repeat shuffles the sites and
	// deals them k to a test fold, which makes ⌈S/k⌉ folds of S sites
	// (K is not read). Groups are not needed: whole sites move.
	SitesOut int
}

// Splits returns the Repeats × K splits of n participants, repeat by repeat.
// Every participant is in exactly one test fold per repeat. With Groups,
// whole groups are dealt to folds: the groups are shuffled, then (when
// Strata are set) ordered by their mean stratum value and dealt in blocks
// of K, one group to each fold in shuffled order, which balances the folds
// on the strata; without Strata each group goes to the fold with the fewest
// participants so far, which balances fold sizes. It is an error to ask for
// more folds than there are groups.
//
// With Classes (and no Sites), the folds are stratified by class. Without
// Groups the participants are shuffled, ordered by class (missing last)
// and dealt round the folds in turn, the fold order shuffled once per
// repeat: every fold holds ⌊n_c/K⌋ or ⌈n_c/K⌉ participants of each class
// c (and ⌊n/K⌋ or ⌈n/K⌉ in all). With Groups, the groups are shuffled,
// ordered by the size of their rarest class (rarest first), larger groups
// first among equals, and each goes to a fold that lacks the group's
// rarest class if there is one, and among those to the fold where its
// classes are so far least represented: the smallest Σ_c m_c·f_kc/n_c,
// where m_c is the group's count of class c, f_kc the fold's and n_c the
// cohort's; ties to the smaller fold, then at random. The cohort's rarest
// class is thus in every fold whenever it spans at least K groups, and
// the others as far as the groups allow.
//
// With SitesOut > 0 the splits are leave-k-sites-out instead (see
// SitesOut); a test fold then holds every participant of its sites.
func (f Folds) Splits(n int) ([]Split, error) {
	if f.SitesOut > 0 {
		return f.siteSplits(n)
	}
	if f.K < 2 {
		return nil, fmt.Errorf("train: %d folds: need at least 2", f.K)
	}
	if f.Repeats < 1 {
		return nil, fmt.Errorf("train: %d repeats: need at least 1", f.Repeats)
	}
	if f.Groups != nil && len(f.Groups) != n || f.Strata != nil && len(f.Strata) != n || f.Sites != nil && len(f.Sites) != n ||
		f.Classes != nil && len(f.Classes) != n {
		panic("train: Folds.Groups, Strata, Classes or Sites length differs from n")
	}
	units := f.units(n)
	if len(units) < f.K {
		return nil, fmt.Errorf("train: %d folds but only %d groups of participants", f.K, len(units))
	}
	var splits []Split
	for r := 0; r < f.Repeats; r++ {
		rng := rand.New(rand.NewPCG(f.Seed, uint64(r)+1))
		fold := f.deal(units, rng)
		for k := 0; k < f.K; k++ {
			s := Split{Repeat: r, Fold: k}
			for u, members := range units {
				if fold[u] == k {
					s.Test = append(s.Test, members...)
				} else {
					s.Train = append(s.Train, members...)
				}
			}
			slices.Sort(s.Test)
			slices.Sort(s.Train)
			splits = append(splits, s)
		}
	}
	return splits, nil
}

// units returns the indivisible units of dealing: groups, or single
// participants when there are no groups, in order of first appearance.
func (f Folds) units(n int) [][]int {
	if f.Groups == nil {
		return data.GroupIndices(make([]string, n))
	}
	return data.GroupIndices(f.Groups)
}

// siteSplits returns the leave-k-sites-out splits of n participants.
func (f Folds) siteSplits(n int) ([]Split, error) {
	if f.Sites == nil || len(f.Sites) != n {
		panic("train: Folds.SitesOut without a site per participant")
	}
	if f.Repeats < 1 {
		return nil, fmt.Errorf("train: %d repeats: need at least 1", f.Repeats)
	}
	bySite := data.GroupIndices(f.Sites)
	S := len(bySite)
	if S <= f.SitesOut {
		return nil, fmt.Errorf("train: %d sites out per fold, but only %d sites", f.SitesOut, S)
	}
	K := (S + f.SitesOut - 1) / f.SitesOut
	var splits []Split
	for r := 0; r < f.Repeats; r++ {
		rng := rand.New(rand.NewPCG(f.Seed, uint64(r)+1))
		order := rng.Perm(S)
		if f.SitesOut == 1 {
			order = order[:0]
			for u := range S {
				order = append(order, u)
			}
		}
		for k := 0; k < K; k++ {
			s := Split{Repeat: r, Fold: k}
			out := make([]bool, S)
			for _, u := range order[k*f.SitesOut : min((k+1)*f.SitesOut, S)] {
				out[u] = true
			}
			for u, members := range bySite {
				if out[u] {
					s.Test = append(s.Test, members...)
				} else {
					s.Train = append(s.Train, members...)
				}
			}
			slices.Sort(s.Test)
			slices.Sort(s.Train)
			splits = append(splits, s)
		}
	}
	return splits, nil
}

// deal assigns each unit a fold.
func (f Folds) deal(units [][]int, rng *rand.Rand) []int {
	order := rng.Perm(len(units))
	fold := make([]int, len(units))
	if f.Sites != nil {
		// Stable sort of the shuffled order by site, then stratum:
		// dealing blocks of K then spreads each site over the folds.
		site := make([]string, len(units))
		key := make([]float64, len(units))
		for u, members := range units {
			site[u] = f.Sites[members[0]]
			key[u] = math.NaN()
			switch {
			case f.Classes != nil:
				key[u] = float64(majorityClass(f.Classes, members))
			case f.Strata != nil:
				key[u] = meanIgnoringNaN(f.Strata, members)
			}
		}
		sort.SliceStable(order, func(a, b int) bool {
			ua, ub := order[a], order[b]
			if site[ua] != site[ub] {
				return site[ua] < site[ub]
			}
			ka, kb := key[ua], key[ub]
			if math.IsNaN(kb) {
				return !math.IsNaN(ka)
			}
			return ka < kb
		})
		// Continue the deal across sites: the next block starts where the
		// last site's left off, so small sites do not all land in fold 0.
		slots := rng.Perm(f.K)
		for j, u := range order {
			if j%f.K == 0 && j > 0 {
				slots = rng.Perm(f.K)
			}
			fold[u] = slots[j%f.K]
		}
		return fold
	}
	if f.Classes != nil && f.Groups == nil {
		// Stable sort of the shuffled order by class, missing (−1) last,
		// then one deal round the folds across all classes.
		sort.SliceStable(order, func(a, b int) bool {
			ca, cb := f.Classes[units[order[a]][0]], f.Classes[units[order[b]][0]]
			if ca < 0 || cb < 0 {
				return cb < 0 && ca >= 0
			}
			return ca < cb
		})
		slots := rng.Perm(f.K)
		for j, u := range order {
			fold[u] = slots[j%f.K]
		}
		return fold
	}
	if f.Classes != nil {
		return f.dealGroupsByClass(units, order, rng)
	}
	if f.Strata != nil {
		key := make([]float64, len(units))
		for u, members := range units {
			key[u] = meanIgnoringNaN(f.Strata, members)
		}
		// Stable sort of the shuffled order by stratum value: ties and
		// NaN keep their random order (NaN last).
		sort.SliceStable(order, func(a, b int) bool {
			ka, kb := key[order[a]], key[order[b]]
			if math.IsNaN(kb) {
				return !math.IsNaN(ka)
			}
			return ka < kb
		})
		for start := 0; start < len(order); start += f.K {
			slots := rng.Perm(f.K)
			for j := start; j < min(start+f.K, len(order)); j++ {
				fold[order[j]] = slots[j-start]
			}
		}
		return fold
	}
	if f.Groups == nil {
		for j, u := range order {
			fold[u] = j % f.K
		}
		return fold
	}
	// Largest groups first so that sizes balance; the shuffle breaks ties.
	sort.SliceStable(order, func(a, b int) bool { return len(units[order[a]]) > len(units[order[b]]) })
	size := make([]int, f.K)
	for _, u := range order {
		k := slices.Index(size, slices.Min(size))
		fold[u] = k
		size[k] += len(units[u])
	}
	return fold
}

// dealGroupsByClass assigns each group a fold so that every fold holds
// each class as nearly in the cohort's proportion as whole groups allow
// (see Splits); order is the shuffled order of the units.
func (f Folds) dealGroupsByClass(units [][]int, order []int, rng *rand.Rand) []int {
	// Strata: the classes, with missing as a stratum of its own (index 0).
	stratum := func(i int) int { return f.Classes[i] + 1 }
	nStrata := 0
	for _, c := range f.Classes {
		nStrata = max(nStrata, c+2)
	}
	total := make([]int, nStrata)
	for _, c := range f.Classes {
		total[c+1]++
	}
	counts := make([][]int, len(units)) // per unit, per stratum
	rarest := make([]int, len(units))   // per unit, its rarest stratum
	for u, members := range units {
		counts[u] = make([]int, nStrata)
		rarest[u] = stratum(members[0])
		for _, i := range members {
			s := stratum(i)
			counts[u][s]++
			if total[s] < total[rarest[u]] || total[s] == total[rarest[u]] && s < rarest[u] {
				rarest[u] = s
			}
		}
	}
	sort.SliceStable(order, func(a, b int) bool {
		ua, ub := order[a], order[b]
		if ta, tb := total[rarest[ua]], total[rarest[ub]]; ta != tb {
			return ta < tb
		}
		return len(units[ua]) > len(units[ub])
	})
	tieBreak := rng.Perm(f.K)
	inFold := make([][]int, f.K) // per fold, per stratum
	for k := range inFold {
		inFold[k] = make([]int, nStrata)
	}
	size := make([]int, f.K)
	fold := make([]int, len(units))
	for _, u := range order {
		best, bestHas, bestCost := -1, false, math.Inf(1)
		for _, k := range tieBreak {
			has := inFold[k][rarest[u]] > 0
			var cost float64
			for s, m := range counts[u] {
				if m > 0 {
					cost += float64(m) * float64(inFold[k][s]) / float64(total[s])
				}
			}
			switch {
			case best < 0, bestHas && !has:
			case has && !bestHas:
				continue
			case cost < bestCost-1e-12:
			case math.Abs(cost-bestCost) <= 1e-12 && size[k] < size[best]:
			default:
				continue
			}
			best, bestHas, bestCost = k, has, cost
		}
		fold[u] = best
		size[best] += len(units[u])
		for s, m := range counts[u] {
			inFold[best][s] += m
		}
	}
	return fold
}

// majorityClass returns the most frequent class among the participants
// idx (the lowest on ties; −1 when all are missing).
func majorityClass(classes []int, idx []int) int {
	count := map[int]int{}
	best := -1
	for _, i := range idx {
		c := classes[i]
		if c < 0 {
			continue
		}
		count[c]++
		if best < 0 || count[c] > count[best] || count[c] == count[best] && c < best {
			best = c
		}
	}
	return best
}

func meanIgnoringNaN(x []float64, idx []int) float64 {
	var sum float64
	var n int
	for _, i := range idx {
		if !math.IsNaN(x[i]) {
			sum += x[i]
			n++
		}
	}
	if n == 0 {
		return math.NaN()
	}
	return sum / float64(n)
}

// InnerValidation picks the inner validation part of a training fold:
// count participants when count > 0, else the given fraction of the
// training fold (rounded), keeping groups whole. It returns the remaining
// training indices and the validation indices, both sorted. The choice is
// seeded and never looks at the test fold.
func InnerValidation(train []int, groups []string, count int, fraction float64, seed uint64) (fit, valid []int) {
	want := count
	if want <= 0 {
		want = int(math.Round(fraction * float64(len(train))))
	}
	if want <= 0 {
		return slices.Clone(train), nil
	}
	sub := Folds{}
	if groups != nil {
		sub.Groups = make([]string, len(train))
		for j, i := range train {
			sub.Groups[j] = groups[i]
		}
	}
	units := sub.units(len(train))
	rng := rand.New(rand.NewPCG(seed, 0x1a2b))
	inValid := make([]bool, len(train))
	taken := 0
	for _, u := range rng.Perm(len(units)) {
		if taken >= want {
			break
		}
		if taken+len(units[u]) > want && taken > 0 {
			continue
		}
		for _, j := range units[u] {
			inValid[j] = true
		}
		taken += len(units[u])
	}
	for j, i := range train {
		if inValid[j] {
			valid = append(valid, i)
		} else {
			fit = append(fit, i)
		}
	}
	return fit, valid
}

// InnerValidationByClass picks the inner validation part of a training
// fold for a classifier of one label, stratified by class: classes holds
// one class per cohort participant (an index 0..K−1; −1 where the label
// is missing), and the part holds, of the n_c training participants of
// class c, a quota q_c proportional to n_c. Of the n labelled training
// participants it takes want = count when count > 0 (at most n), else
// round(fraction·n); q_c is want·n_c/n rounded by largest remainders (ties
// to the lower class), then raised to 1 and lowered to n_c − 1 when
// n_c ≥ 2, so that every class with two training participants is in both
// parts, and 0 when n_c = 1 (common practice, no source: scikit-learn's
// StratifiedShuffleSplit keeps proportions the same way but does not
// promise every class in both parts). The sizes thus follow the quotas
// and may differ from want by the raised and lowered ones.
//
// Without groups the part is exactly q_c participants of each class c,
// drawn at random. With groups (one per cohort participant, as for
// InnerValidation), groups stay whole: they are shuffled, stably ordered
// by the training count of their rarest class (rarest first), and each
// joins the part when that brings the part's class counts v_c nearer the
// quotas, Σ_c |q_c − v_c| falling, and leaves at least one participant of
// each of its classes outside it. A participant whose label is missing
// joins only with its group. Like InnerValidation it returns the
// remaining training indices and the validation indices, both sorted; the
// choice is seeded and never looks at the test fold.
func InnerValidationByClass(train []int, groups []string, classes []int, count int, fraction float64, seed uint64) (fit, valid []int) {
	K := 0
	for _, i := range train {
		K = max(K, classes[i]+1)
	}
	total := make([]int, K)
	n := 0
	for _, i := range train {
		if c := classes[i]; c >= 0 {
			total[c]++
			n++
		}
	}
	want := count
	if want <= 0 {
		want = int(math.Round(fraction * float64(n)))
	}
	want = min(want, n)
	if want <= 0 {
		return slices.Clone(train), nil
	}
	quota := classQuotas(total, want)

	sub := Folds{}
	if groups != nil {
		sub.Groups = make([]string, len(train))
		for j, i := range train {
			sub.Groups[j] = groups[i]
		}
	}
	units := sub.units(len(train))
	counts := make([][]int, len(units)) // per unit, per class
	rarest := make([]int, len(units))   // per unit, the training count of its rarest class; n+1 when it has none
	for u, members := range units {
		counts[u] = make([]int, K)
		rarest[u] = n + 1
		for _, j := range members {
			if c := classes[train[j]]; c >= 0 {
				counts[u][c]++
				rarest[u] = min(rarest[u], total[c])
			}
		}
	}
	rng := rand.New(rand.NewPCG(seed, 0x1a2c))
	order := rng.Perm(len(units))
	sort.SliceStable(order, func(a, b int) bool { return rarest[order[a]] < rarest[order[b]] })
	taken := make([]int, K)
	inValid := make([]bool, len(train))
	for _, u := range order {
		if rarest[u] > n {
			continue // no labelled member
		}
		gain, fits := 0, true
		for c, m := range counts[u] {
			if m == 0 {
				continue
			}
			gain += abs(quota[c]-taken[c]-m) - abs(quota[c]-taken[c])
			fits = fits && taken[c]+m < total[c]
		}
		if gain >= 0 || !fits {
			continue
		}
		for c, m := range counts[u] {
			taken[c] += m
		}
		for _, j := range units[u] {
			inValid[j] = true
		}
	}
	for j, i := range train {
		if inValid[j] {
			valid = append(valid, i)
		} else {
			fit = append(fit, i)
		}
	}
	return fit, valid
}

// classQuotas returns the validation quota of each class of counts total
// for a part of want participants (see InnerValidationByClass).
func classQuotas(total []int, want int) []int {
	n := 0
	for _, t := range total {
		n += t
	}
	quota := make([]int, len(total))
	rest := make([]float64, len(total))
	left := want
	for c, t := range total {
		exact := float64(want) * float64(t) / float64(n)
		quota[c] = int(math.Floor(exact))
		rest[c] = exact - float64(quota[c])
		left -= quota[c]
	}
	byRest := make([]int, len(total))
	for c := range byRest {
		byRest[c] = c
	}
	sort.SliceStable(byRest, func(a, b int) bool { return rest[byRest[a]] > rest[byRest[b]] })
	for _, c := range byRest[:left] {
		quota[c]++
	}
	for c, t := range total {
		switch {
		case t < 2:
			quota[c] = 0
		case quota[c] < 1:
			quota[c] = 1
		case quota[c] > t-1:
			quota[c] = t - 1
		}
	}
	return quota
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}
