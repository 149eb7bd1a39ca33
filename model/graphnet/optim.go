package graphnet

import (
	"math"

	"github.com/skein-neuro/skein/internal/parallel"
	"github.com/skein-neuro/skein/internal/vec"
)

// An optimizer updates weights in place from their gradients. It holds the
// weights' and gradients' backing slices, so a step allocates nothing.
type optimizer interface {
	// step clips the gradients (when configured) and updates every weight
	// at the learning rate.
	step(rate float64)
}

// newOptimizer returns the optimizer of cfg over the weights ws and their
// gradients gs: ws[i] and gs[i] are the backing slices of one weight array
// and its gradient, all []float32 or all []float64. Its updates run in
// chunks on pool (nil: on the caller alone); each weight's update is the
// same either way.
func newOptimizer(cfg OptimizerConfig, ws, gs []any, pool *parallel.Pool) optimizer {
	switch ws[0].(type) {
	case []float32:
		return newOptimizerOf[float32](cfg, ws, gs, pool)
	case []float64:
		return newOptimizerOf[float64](cfg, ws, gs, pool)
	}
	panic("graphnet: optimizer over weights that are not float32 or float64")
}

// updateSize is the number of weights in a chunk of an update.
const updateSize = 1 << 14

// span is the weights lo…hi−1 of array i.
type span struct{ i, lo, hi int }

// spansOf splits the arrays of lengths len(w[i]) into chunks of at most
// updateSize weights.
func spansOf[T float32 | float64](w [][]T) []span {
	var ss []span
	for i, wi := range w {
		for lo := 0; lo < len(wi); lo += updateSize {
			ss = append(ss, span{i, lo, min(lo+updateSize, len(wi))})
		}
	}
	return ss
}

func newOptimizerOf[T float32 | float64](cfg OptimizerConfig, ws, gs []any, pool *parallel.Pool) optimizer {
	w := make([][]T, len(ws))
	g := make([][]T, len(ws))
	m := make([][]T, len(ws))
	for i := range ws {
		w[i] = ws[i].([]T)
		g[i] = gs[i].([]T)
		if len(w[i]) != len(g[i]) {
			panic("graphnet: weight and gradient of different lengths")
		}
		m[i] = make([]T, len(w[i]))
	}
	if cfg.Kind == SGD {
		return &sgd[T]{w: w, g: g, velocity: m, momentum: *cfg.Momentum, decay: cfg.WeightDecay, clip: cfg.ClipNorm, spans: spansOf(w), pool: pool}
	}
	v := make([][]T, len(ws))
	for i := range ws {
		v[i] = make([]T, len(w[i]))
	}
	return &adamW[T]{w: w, g: g, m: m, v: v, beta1: *cfg.Beta1, beta2: *cfg.Beta2, eps: *cfg.Epsilon, decay: cfg.WeightDecay, clip: cfg.ClipNorm, spans: spansOf(w), pool: pool}
}

// adamW is Adam with decoupled weight decay (Loshchilov & Hutter 2019,
// Algorithm 2), in the form of torch.optim.AdamW. At step t with rate η:
//
//	w ← w − η·λ·w
//	m ← β1·m + (1 − β1)·g
//	v ← β2·v + (1 − β2)·g²
//	w ← w − (η/(1 − β1^t))·m / (sqrt(v)/sqrt(1 − β2^t) + ε)
//
// in the weights' own arithmetic, as vec.Adam.Step orders it.
type adamW[T float32 | float64] struct {
	w, g, m, v               [][]T
	beta1, beta2, eps, decay float64
	clip                     float64
	t                        int
	spans                    []span
	pool                     *parallel.Pool
	factors                  vec.Adam[T] // of the current step
}

func (o *adamW[T]) step(rate float64) {
	clipGlobalNorm(o.g, o.clip)
	o.t++
	o.factors = vec.Adam[T]{
		Beta1:      T(o.beta1),
		Beta2:      T(o.beta2),
		Eps:        T(o.eps),
		Keep:       T(1 - rate*o.decay),
		StepSize:   T(rate / (1 - math.Pow(o.beta1, float64(o.t)))),
		InvRootBC2: T(1 / math.Sqrt(1-math.Pow(o.beta2, float64(o.t)))),
	}
	o.pool.Run(o, len(o.spans))
}

// Chunk updates the weights of span c.
func (o *adamW[T]) Chunk(c int) {
	s := o.spans[c]
	o.factors.Step(o.w[s.i][s.lo:s.hi], o.g[s.i][s.lo:s.hi], o.m[s.i][s.lo:s.hi], o.v[s.i][s.lo:s.hi])
}

// sgd is stochastic gradient descent with momentum μ and L2 weight decay λ,
// in the form of torch.optim.SGD (no dampening, no Nesterov):
//
//	g ← g + λ·w
//	v ← μ·v + g
//	w ← w − η·v
type sgd[T float32 | float64] struct {
	w, g, velocity  [][]T
	momentum, decay float64
	clip            float64
	spans           []span
	pool            *parallel.Pool
	rate            T // of the current step
}

func (o *sgd[T]) step(rate float64) {
	clipGlobalNorm(o.g, o.clip)
	o.rate = T(rate)
	o.pool.Run(o, len(o.spans))
}

// Chunk updates the weights of span c.
func (o *sgd[T]) Chunk(c int) {
	s := o.spans[c]
	w := o.w[s.i][s.lo:s.hi]
	g, v := o.g[s.i][s.lo:s.hi], o.velocity[s.i][s.lo:s.hi]
	g, v = g[:len(w)], v[:len(w)]
	mu, decay, eta := T(o.momentum), T(o.decay), o.rate
	for j := range w {
		v[j] = mu*v[j] + g[j] + decay*w[j]
		w[j] -= eta * v[j]
	}
}

// clipGlobalNorm scales the gradients gs by maxNorm/(‖g‖ + 1e-6) when their
// global L2 norm ‖g‖ exceeds maxNorm, as torch.nn.utils.clip_grad_norm_
// does. maxNorm = 0 leaves them alone.
func clipGlobalNorm[T float32 | float64](gs [][]T, maxNorm float64) {
	if maxNorm == 0 {
		return
	}
	var sq float64
	for _, g := range gs {
		for _, x := range g {
			sq += float64(x) * float64(x)
		}
	}
	scale := maxNorm / (math.Sqrt(sq) + 1e-6)
	if scale >= 1 {
		return
	}
	s := T(scale)
	for _, g := range gs {
		for j := range g {
			g[j] *= s
		}
	}
}

// rateAt returns the learning rate of epoch e (0-based) of a run of epochs
// epochs under the schedule of cfg.
func rateAt(cfg OptimizerConfig, e, epochs int) float64 {
	switch cfg.Schedule {
	case ScheduleStep:
		return *cfg.Rate * math.Pow(*cfg.Factor, float64(e / *cfg.StepEpochs))
	case ScheduleCosine:
		return cfg.MinRate + (*cfg.Rate-cfg.MinRate)*(1+math.Cos(math.Pi*float64(e)/float64(epochs)))/2
	}
	return *cfg.Rate
}
