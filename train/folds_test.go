package train

import (
	"fmt"
	"math"
	"reflect"
	"slices"
	"testing"
)

func TestSplitsPartition(t *testing.T) {
	families := make([]string, 50)
	for i := range families {
		families[i] = fmt.Sprintf("fam%02d", i/3) // families of three (the last of two)
	}
	strata := make([]float64, 50)
	for i := range strata {
		strata[i] = float64((i * 37) % 50)
	}
	strata[7] = math.NaN()
	classes := make([]int, 50)
	for i := range classes {
		classes[i] = (i * 7) % 3
	}
	classes[11] = -1
	tests := []struct {
		name string
		f    Folds
	}{
		{"plain", Folds{K: 5, Repeats: 3, Seed: 1}},
		{"grouped", Folds{K: 5, Repeats: 2, Seed: 2, Groups: families}},
		{"stratified", Folds{K: 4, Repeats: 2, Seed: 3, Strata: strata}},
		{"grouped and stratified", Folds{K: 3, Repeats: 2, Seed: 4, Groups: families, Strata: strata}},
		{"by class", Folds{K: 5, Repeats: 2, Seed: 5, Classes: classes}},
		{"grouped by class", Folds{K: 4, Repeats: 2, Seed: 6, Groups: families, Classes: classes}},
		{"by class and site", Folds{K: 3, Repeats: 2, Seed: 7, Classes: classes, Sites: families}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			splits, err := tt.f.Splits(50)
			if err != nil {
				t.Fatal(err)
			}
			if len(splits) != tt.f.K*tt.f.Repeats {
				t.Fatalf("%d splits, want %d", len(splits), tt.f.K*tt.f.Repeats)
			}
			for r := 0; r < tt.f.Repeats; r++ {
				seen := make([]int, 50)
				for _, s := range splits[r*tt.f.K : (r+1)*tt.f.K] {
					if len(s.Test) == 0 || len(s.Train)+len(s.Test) != 50 {
						t.Fatalf("repeat %d fold %d: %d train + %d test", r, s.Fold, len(s.Train), len(s.Test))
					}
					for _, i := range s.Test {
						seen[i]++
					}
					if tt.f.Groups != nil {
						testGroups := make(map[string]bool)
						for _, i := range s.Test {
							testGroups[tt.f.Groups[i]] = true
						}
						for _, i := range s.Train {
							if testGroups[tt.f.Groups[i]] {
								t.Fatalf("repeat %d fold %d: group %s on both sides", r, s.Fold, tt.f.Groups[i])
							}
						}
					}
				}
				for i, c := range seen {
					if c != 1 {
						t.Fatalf("repeat %d: participant %d in %d test folds", r, i, c)
					}
				}
			}
			again, _ := tt.f.Splits(50)
			if !reflect.DeepEqual(splits, again) {
				t.Fatal("same seed gave different splits")
			}
		})
	}
}

func TestSplitsBalance(t *testing.T) {
	// Plain k-fold sizes differ by at most one (common practice, no source).
	splits, _ := Folds{K: 7, Repeats: 1, Seed: 9}.Splits(100)
	for _, s := range splits {
		if len(s.Test) < 14 || len(s.Test) > 15 {
			t.Errorf("fold %d has %d test participants, want 14 or 15", s.Fold, len(s.Test))
		}
	}
	// Stratified folds have test means close to the overall mean of a
	// uniform 0..99 target: each block of K consecutive ranks gives one
	// value to each fold, so fold means differ from 49.5 by less than K.
	strata := make([]float64, 100)
	for i := range strata {
		strata[i] = float64(99 - i)
	}
	splits, _ = Folds{K: 5, Repeats: 1, Seed: 9, Strata: strata}.Splits(100)
	for _, s := range splits {
		mean := meanIgnoringNaN(strata, s.Test)
		if math.Abs(mean-49.5) > 5 {
			t.Errorf("stratified fold %d has mean %.1f, want 49.5 ± 5", s.Fold, mean)
		}
	}
}

func TestSplitsErrors(t *testing.T) {
	groups := []string{"a", "a", "b", "b", "c", "c"}
	if _, err := (Folds{K: 4, Repeats: 1, Groups: groups}).Splits(6); err == nil {
		t.Error("4 folds over 3 groups: no error")
	}
	if _, err := (Folds{K: 1, Repeats: 1}).Splits(6); err == nil {
		t.Error("1 fold: no error")
	}
}

func TestInnerValidation(t *testing.T) {
	train := []int{0, 2, 3, 5, 6, 8, 9, 11, 12, 14}
	groups := make([]string, 15)
	for i := range groups {
		groups[i] = fmt.Sprint(i / 2)
	}
	fit, valid := InnerValidation(train, groups, 4, 0, 5)
	if len(valid) == 0 || len(valid) > 4 {
		t.Fatalf("%d validation participants, want 1..4", len(valid))
	}
	if got := append(slices.Clone(fit), valid...); len(got) != len(train) {
		t.Fatalf("fit and valid hold %d participants, want %d", len(got), len(train))
	}
	vg := make(map[string]bool)
	for _, i := range valid {
		vg[groups[i]] = true
	}
	for _, i := range fit {
		if vg[groups[i]] {
			t.Fatalf("group %s on both sides of the inner split", groups[i])
		}
	}
	_, valid = InnerValidation(train, nil, 0, 0.3, 5)
	if len(valid) != 3 {
		t.Fatalf("fraction 0.3 of 10 gave %d, want 3", len(valid))
	}
}
