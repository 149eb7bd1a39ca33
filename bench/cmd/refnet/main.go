// Command refnet trains skein's reference network on an invented cohort and
// prints seconds per epoch, the arithmetic done and the peak memory: the
// skein side of the side-by-side benchmark in bench/compare.sh.
//
// The reference network: a one-channel p × p input (the functional matrix
// propagated by the renormalized adjacency of the structural matrix, S·F),
// e2e 32 channels, e2n 64, n2g 128, head 64 → 32 → 1, leaky ReLU 0.2, loss
// mean|e| + mean e², Adam at rate 1e-3, batches of 16.
//
// It names the BLAS in use and whether the element loops run on vectors
// (a build with GOEXPERIMENT=simd on a processor with AVX2; see package
// internal/vec).
//
// Usage:
//
//	refnet [-p 116] [-n 275] [-batch 16] [-epochs 5] [-dtype float32] [-threads T] [-cpuprofile FILE] [-memprofile FILE]
//	refnet -folds K -jobs J [-threads T] [-procs C] ...
//	refnet -sgemm [-threads T]
//
// The first form trains one network on all n participants and prints the
// median time of the epochs after the first (which builds the graphs). The
// second trains K networks on the training parts of a K-fold split, J at a
// time, and prints the wall time of the whole K-fold run. -threads sets the
// OpenBLAS thread count (default 1, as skein's commands run it: each
// network spreads its products over GOMAXPROCS goroutines itself;
// ignored by the pure-Go build); -procs sets GOMAXPROCS.
//
// The third prints the rate of the BLAS in use on one large float32
// product (2048 × 2048 × 2048, the median of 9 after one warm-up) with T
// OpenBLAS threads: the rate from which bench/compare.sh computes the
// arithmetic floor of an epoch in the same run.
//
// Arithmetic is counted as 2·m·n·k per matrix product, forward and backward,
// for the e2e, e2n, n2g and head layers (elementwise work is not counted):
// see flopsPerParticipant.
package main

import (
	"context"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"runtime"
	"runtime/pprof"
	"slices"
	"sync"
	"syscall"
	"time"

	gonumblas "gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas32"
	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/internal/blas"
	"github.com/skein-neuro/skein/internal/vec"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/graphnet"
)

// The reference network's sizes.
const (
	e2eChannels = 32
	e2nChannels = 64
	n2gSize     = 128
)

var head = []int{64, 32}

func main() {
	p := flag.Int("p", 116, "regions")
	n := flag.Int("n", 275, "participants")
	batch := flag.Int("batch", 16, "batch size")
	epochs := flag.Int("epochs", 5, "epochs (the first is not timed in the single-network form)")
	dtype := flag.String("dtype", "float32", "float32 or float64")
	threads := flag.Int("threads", 1, "OpenBLAS threads (0: leave as OpenBLAS chose)")
	procs := flag.Int("procs", 0, "GOMAXPROCS (0: leave as is)")
	sgemm := flag.Bool("sgemm", false, "print the rate of one large float32 product instead of training")
	folds := flag.Int("folds", 0, "train one network per fold of a K-fold split (0: one network on everyone)")
	jobs := flag.Int("jobs", 1, "networks trained at once with -folds")
	cpuprofile := flag.String("cpuprofile", "", "write a CPU profile to `FILE`")
	memprofile := flag.String("memprofile", "", "write a heap profile to `FILE` at the end of training, while the network is alive")
	flag.Parse()
	if *procs > 0 {
		runtime.GOMAXPROCS(*procs)
	}
	if *threads > 0 {
		blas.SetThreads(*threads)
	}
	if *cpuprofile != "" {
		f, err := os.Create(*cpuprofile)
		if err != nil {
			fail(err)
		}
		if err := pprof.StartCPUProfile(f); err != nil {
			fail(err)
		}
		defer pprof.StopCPUProfile()
	}
	if *sgemm {
		const size = 2048
		fmt.Printf("sgemm blas=%s n=%d threads=%d: %.1f GFLOP/s\n", blas.Name(), size, blas.Threads(), sgemmRate(size))
		return
	}
	ps, y := cohort(*n, *p, 1)
	cfg := graphnet.Config{
		Branches: []graphnet.BranchConfig{{
			Input:     graphnet.InputPropagated,
			Operator:  data.RenormalizedAdjacency,
			Propagate: graphnet.PropagateLeft,
			Layers: []graphnet.LayerConfig{
				{Kind: graphnet.LayerE2E, Channels: e2eChannels},
				{Kind: graphnet.LayerE2N, Channels: e2nChannels},
				{Kind: graphnet.LayerN2G, Size: n2gSize},
			},
		}},
		Head:      head,
		DType:     graphnet.DType(*dtype),
		Epochs:    new(*epochs),
		BatchSize: new(*batch),
		// AdamW without weight decay is Adam; the default rate is 1e-3.
		Optimizer: graphnet.OptimizerConfig{Kind: graphnet.AdamW, Rate: new(1e-3)},
	}
	cfg.SetDefaults()
	if err := cfg.Validate(); err != nil {
		fail(err)
	}
	ctx := context.Background()
	label := fmt.Sprintf("skein blas=%s vector=%t p=%d n=%d batch=%d threads=%d procs=%d %s", blas.Name(), vec.SIMD(), *p, *n, *batch, blas.Threads(), runtime.GOMAXPROCS(0), *dtype)
	flops := flopsPerParticipant(*p)
	if *folds > 0 {
		start := time.Now()
		if err := crossValidate(ctx, cfg, *p, ps, y, *folds, *jobs); err != nil {
			fail(err)
		}
		wall := time.Since(start).Seconds()
		gflop := flops * float64(*epochs) * float64(*n) * float64(*folds-1) / 1e9 // each participant trains in folds−1 folds
		fmt.Printf("%s folds=%d jobs=%d epochs=%d: wall %.3f s, %.1f GFLOP, %.1f GFLOP/s, max RSS %.0f MiB, live heap after the run %.0f MiB\n",
			label, *folds, *jobs, *epochs, wall, gflop, gflop/wall, maxRSS(), liveHeapMiB())
		return
	}
	net, err := graphnet.New(cfg, *p, 1, 1)
	if err != nil {
		fail(err)
	}
	// Allocations are counted from the end of the first epoch, which
	// builds the graphs and their buffers, to the end of the last.
	var times []float64
	var before, after runtime.MemStats
	last := time.Now()
	net.OnEpoch(func(e model.Epoch) {
		now := time.Now()
		times = append(times, now.Sub(last).Seconds())
		switch e.Epoch {
		case 1:
			runtime.ReadMemStats(&before)
		case *epochs:
			runtime.ReadMemStats(&after)
		}
		last = time.Now()
	})
	if err := net.Fit(ctx, model.Dataset{Participants: ps, Y: y}, model.Dataset{}); err != nil {
		fail(err)
	}
	if *memprofile != "" {
		f, err := os.Create(*memprofile)
		if err != nil {
			fail(err)
		}
		runtime.GC()
		if err := pprof.Lookup("heap").WriteTo(f, 0); err != nil {
			fail(err)
		}
		f.Close()
	}
	timed := times
	if len(times) > 1 {
		timed = times[1:]
	}
	med := median(timed)
	gflop := flops * float64(*n) / 1e9
	steps := float64(*epochs-1) * math.Ceil(float64(*n)/float64(*batch))
	dataMiB := float64(2**n**p**p*8) / (1 << 20)
	fmt.Printf("%s: epoch median %.3f s (epochs %d, first %.3f s); %.1f GFLOP an epoch, %.1f GFLOP/s; "+
		"%.0f allocations a step; max RSS %.0f MiB, data %.0f MiB, model %.0f MiB\n",
		label, med, *epochs, times[0], gflop, gflop/med,
		float64(after.Mallocs-before.Mallocs)/steps, maxRSS(), dataMiB, modelMiB(*p, *batch, *dtype))
}

// sgemmRate returns the GFLOP/s of C = A·B on size × size float32
// matrices through the BLAS in use: the median of 9 products after one
// that warms up.
func sgemmRate(size int) float64 {
	a := make([]float32, size*size)
	for i := range a {
		a[i] = float32(i%7) - 3
	}
	b, c := slices.Clone(a), make([]float32, size*size)
	impl := blas32.Implementation()
	var rates []float64
	for r := range 10 {
		start := time.Now()
		impl.Sgemm(gonumblas.NoTrans, gonumblas.NoTrans, size, size, size, 1, a, size, b, size, 0, c, size)
		if r > 0 {
			rates = append(rates, 2*math.Pow(float64(size), 3)/time.Since(start).Seconds()/1e9)
		}
	}
	return median(rates)
}

// flopsPerParticipant counts the multiply-adds (2 flops each) of one
// participant's forward and backward pass through the reference network:
//
//	e2e (C = 1 → O = 32): forward 2·(2·O·p·p) (row and column filters);
//	  backward the weight gradients, as much again (the input needs none).
//	e2n (C = 32 → O = 64): forward 2·O·C·p·p; backward the weight and input
//	  gradients, twice that.
//	n2g (64·p → 128) and the head (128 → 64 → 32 → 1): 2·in·out forward,
//	  twice that backward.
func flopsPerParticipant(p int) float64 {
	pp := float64(p * p)
	e2e := 2 * (2 * e2eChannels * pp)
	e2n := 2 * e2nChannels * e2eChannels * pp
	dense := 0.0
	in := e2nChannels * p
	for _, out := range []int{n2gSize, head[0], head[1], 1} {
		dense += 2 * float64(in*out)
		in = out
	}
	return 2*e2e + 3*e2n + 3*dense
}

// modelMiB is the memory of the weights, their gradients and Adam's two
// moments, plus the outputs of a batch's layers and their gradients (the
// e2e output dominates: batch·32·p·p values).
func modelMiB(p, batch int, dtype string) float64 {
	size := 4.0
	if dtype == "float64" {
		size = 8
	}
	params := 2*e2eChannels*p + e2eChannels + e2nChannels*e2eChannels*p + e2nChannels
	in := e2nChannels * p
	for _, out := range []int{n2gSize, head[0], head[1], 1} {
		params += in*out + out
		in = out
	}
	activations := batch * (e2eChannels*p*p + e2nChannels*p + n2gSize + head[0] + head[1] + 1)
	return size * float64(4*params+2*activations) / (1 << 20)
}

// crossValidate trains one network per fold on the other folds' participants,
// jobs networks at a time.
func crossValidate(ctx context.Context, cfg graphnet.Config, p int, ps []*data.Participant, y *mat.Dense, folds, jobs int) error {
	n := len(ps)
	work := make(chan int)
	errs := make([]error, folds)
	var wg sync.WaitGroup
	for range max(jobs, 1) {
		wg.Go(func() {
			for k := range work {
				var trainPs []*data.Participant
				var trainY []float64
				for i := range n {
					if i%folds != k {
						trainPs = append(trainPs, ps[i])
						trainY = append(trainY, y.At(i, 0))
					}
				}
				net, err := graphnet.New(cfg, p, 1, int64(k+1))
				if err == nil {
					err = net.Fit(ctx, model.Dataset{Participants: trainPs, Y: mat.NewDense(len(trainY), 1, trainY)}, model.Dataset{})
				}
				errs[k] = err
			}
		})
	}
	for k := range folds {
		work <- k
	}
	close(work)
	wg.Wait()
	for k, err := range errs {
		if err != nil {
			return fmt.Errorf("fold %d: %w", k, err)
		}
	}
	return nil
}

// cohort invents n participants with p regions: a symmetric functional
// matrix tanh(0.3·z) (z standard normal), a symmetric structural matrix of
// uniform weights, and a score that depends on a corner of the functional
// matrix plus noise.
func cohort(n, p int, seed uint64) ([]*data.Participant, *mat.Dense) {
	rng := rand.New(rand.NewPCG(seed, 2))
	ps := make([]*data.Participant, n)
	y := mat.NewDense(n, 1, nil)
	for i := range ps {
		f := mat.NewDense(p, p, nil)
		s := mat.NewDense(p, p, nil)
		for a := range p {
			f.Set(a, a, 1)
			for b := a + 1; b < p; b++ {
				v := math.Tanh(0.3 * rng.NormFloat64())
				f.Set(a, b, v)
				f.Set(b, a, v)
				w := rng.Float64()
				s.Set(a, b, w)
				s.Set(b, a, w)
			}
		}
		score := 0.0
		for a := range min(10, p) {
			for b := range min(10, p) {
				score += f.At(a, b)
			}
		}
		y.Set(i, 0, score/10+0.1*rng.NormFloat64())
		ps[i] = &data.Participant{ID: fmt.Sprintf("sub-%03d", i+1), Functional: f, Structural: s}
	}
	return ps, y
}

func median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	if len(s)%2 == 1 {
		return s[len(s)/2]
	}
	return (s[len(s)/2-1] + s[len(s)/2]) / 2
}

// maxRSS is the peak resident memory of the process in MiB (Linux reports
// ru_maxrss in KiB).
func maxRSS() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return math.NaN()
	}
	return float64(ru.Maxrss) / 1024
}

// liveHeapMiB is the Go heap still reachable after a full collection.
func liveHeapMiB() float64 {
	runtime.GC()
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	return float64(ms.HeapAlloc) / (1 << 20)
}

func fail(err error) {
	fmt.Fprintln(os.Stderr, "refnet:", err)
	os.Exit(1)
}
