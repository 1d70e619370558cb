package targets

import (
	"math"

	"chord/sampler"
)

// GaussianShells is the likelihood of two thin Gaussian shells of Feroz &
// Hobson (2008, MNRAS 384, 449, sect. 6.2), in D dimensions,
//
//	L(x) = sum_{k=1,2} exp(-(|x - c_k| - r)^2 / (2 w^2)) / sqrt(2 pi w^2),
//
// with r = 2, w = 0.1, c_1 = (-3.5, 0, ..., 0), c_2 = (3.5, 0, ..., 0),
// under the uniform prior on [-6, 6]^D (ShellsBox). Its log is LogProb.
type GaussianShells struct{ D int }

// ShellsBox is the half-width of the shells' prior cube [-6, 6]^D.
const ShellsBox = 6.0

// Dim implements sampler.Target.
func (s GaussianShells) Dim() int { return s.D }

// NumExtra implements sampler.Target.
func (GaussianShells) NumExtra() int { return 0 }

// NewEvaluator implements sampler.Target.
func (s GaussianShells) NewEvaluator() sampler.Evaluator { return s }

// LogProb implements sampler.Evaluator.
func (GaussianShells) LogProb(x, _ []float64) float64 {
	const r, w = 2.0, 0.1
	norm := -0.5 * math.Log(2*math.Pi*w*w)
	var rest float64
	for _, v := range x[1:] {
		rest += v * v
	}
	shell := func(c float64) float64 {
		dx := x[0] - c
		t := math.Sqrt(dx*dx+rest) - r
		return norm - t*t/(2*w*w)
	}
	a, b := shell(-3.5), shell(3.5)
	if a < b {
		a, b = b, a
	}
	return a + math.Log1p(math.Exp(b-a))
}

// EggBox is the egg-box likelihood of Feroz, Hobson & Bridges (2009, MNRAS
// 398, 1601, sect. 4.2),
//
//	ln L(x, y) = (2 + cos(x/2) cos(y/2))^5,
//
// under the uniform prior on [0, 10 pi]^2 (EggBoxSide): 18 equal peaks
// inside the box and 12 half- and quarter-peaks on its edges.
type EggBox struct{}

// EggBoxSide is the side of the egg-box prior square [0, 10 pi]^2.
const EggBoxSide = 10 * math.Pi

// Dim implements sampler.Target.
func (EggBox) Dim() int { return 2 }

// NumExtra implements sampler.Target.
func (EggBox) NumExtra() int { return 0 }

// NewEvaluator implements sampler.Target.
func (EggBox) NewEvaluator() sampler.Evaluator { return EggBox{} }

// LogProb implements sampler.Evaluator.
func (EggBox) LogProb(x, _ []float64) float64 {
	t := 2 + math.Cos(x[0]/2)*math.Cos(x[1]/2)
	t2 := t * t
	return t2 * t2 * t
}

// NormalMixture is a mixture of isotropic normal densities,
//
//	L(x) = sum_k Weights[k] N(x; Means[k], Sigmas[k]^2 I),
//
// normalised (it integrates to the sum of the weights over R^D). With
// well separated components, the posterior mass of component k under a
// uniform prior that contains them is Weights[k] / sum(Weights).
type NormalMixture struct {
	Weights []float64
	Means   [][]float64
	Sigmas  []float64
}

// Dim implements sampler.Target.
func (m NormalMixture) Dim() int { return len(m.Means[0]) }

// NumExtra implements sampler.Target.
func (NormalMixture) NumExtra() int { return 0 }

// NewEvaluator implements sampler.Target.
func (m NormalMixture) NewEvaluator() sampler.Evaluator { return m }

// LogProb implements sampler.Evaluator.
func (m NormalMixture) LogProb(x, _ []float64) float64 {
	d := float64(len(x))
	out := math.Inf(-1)
	for k, mu := range m.Means {
		s := m.Sigmas[k]
		var r2 float64
		for i, v := range x {
			t := (v - mu[i]) / s
			r2 += t * t
		}
		l := math.Log(m.Weights[k]) - 0.5*r2 - d*math.Log(s) - d/2*math.Log(2*math.Pi)
		if l > out {
			out, l = l, out
		}
		if !math.IsInf(l, -1) {
			out += math.Log1p(math.Exp(l - out))
		}
	}
	return out
}

var (
	_ sampler.Target = GaussianShells{}
	_ sampler.Target = EggBox{}
	_ sampler.Target = NormalMixture{}
)
