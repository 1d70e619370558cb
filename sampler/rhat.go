package sampler

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/gonum/stat/distuv"
)

// The diagnostics of Vehtari, Gelman, Simpson, Carpenter & Bürkner (2021,
// Bayesian Analysis 16, 667): each chain (here: each walker's series of one
// parameter) is split in half, all draws are replaced by their normal scores
// z = Phi^-1((r - 3/8) / (S + 1/4)) of their pooled ranks r (ties get the
// average rank; S is the total number of draws), and the classic potential
// scale reduction and effective sample size are computed on the z values.
//
// The walkers of an ensemble are not independent chains (each proposal
// uses other walkers), so these are heuristics for an ensemble; the
// integrated autocorrelation time is the primary measure.

// SplitRhat returns the rank-normalised split R-hat of one parameter, the
// larger of the bulk value and the folded (tail) value computed on
// |x - median| (Vehtari et al. 2021, sec. 4.2). chains must be at least 2,
// of one length of at least 4; an odd length drops each chain's middle draw.
func SplitRhat(chains [][]float64) (float64, error) {
	z, m, n, err := splitChains(chains)
	if err != nil {
		return math.NaN(), err
	}
	folded := slices.Clone(z)
	med := median(folded)
	for i, v := range folded {
		folded[i] = math.Abs(v - med)
	}
	rankNormalise(z)
	rankNormalise(folded)
	return max(rhat(z, m, n), rhat(folded, m, n)), nil
}

// BulkESS returns the bulk effective sample size of one parameter: the
// effective sample size of the rank-normalised split chains, from the
// multi-chain autocorrelation estimate and Geyer's initial monotone sequence
// (Vehtari et al. 2021, sec. 3.2 and appendix). Arguments as for SplitRhat.
func BulkESS(chains [][]float64) (float64, error) {
	z, m, n, err := splitChains(chains)
	if err != nil {
		return math.NaN(), err
	}
	rankNormalise(z)
	return ess(z, m, n), nil
}

// splitChains copies the halves of every chain into one slice of m chains of
// n draws each, chain-major.
func splitChains(chains [][]float64) (z []float64, m, n int, err error) {
	if len(chains) < 2 {
		return nil, 0, 0, fmt.Errorf("sampler: split R-hat and ESS need at least 2 chains, have %d", len(chains))
	}
	l := len(chains[0])
	if l < 4 {
		return nil, 0, 0, fmt.Errorf("sampler: split R-hat and ESS need chains of at least 4 draws, have %d", l)
	}
	n, m = l/2, 2*len(chains)
	z = make([]float64, 0, m*n)
	for k, c := range chains {
		if len(c) != l {
			return nil, 0, 0, fmt.Errorf("sampler: chain %d has %d draws, chain 0 has %d", k, len(c), l)
		}
		for _, v := range c {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, 0, 0, fmt.Errorf("sampler: chain %d holds %v", k, v)
			}
		}
		z = append(z, c[:n]...)
		z = append(z, c[l-n:]...)
	}
	return z, m, n, nil
}

func median(x []float64) float64 {
	s := slices.Clone(x)
	slices.Sort(s)
	return (s[(len(s)-1)/2] + s[len(s)/2]) / 2
}

// rankNormalise replaces every value by the normal score of its average rank.
func rankNormalise(x []float64) {
	idx := make([]int, len(x))
	for i := range idx {
		idx[i] = i
	}
	sort.Slice(idx, func(a, b int) bool { return x[idx[a]] < x[idx[b]] })
	s := float64(len(x))
	out := make([]float64, len(x))
	for i := 0; i < len(idx); {
		j := i + 1
		for j < len(idx) && x[idx[j]] == x[idx[i]] {
			j++
		}
		r := float64(i+1+j) / 2 // average of ranks i+1..j
		z := distuv.UnitNormal.Quantile((r - 0.375) / (s + 0.25))
		for _, k := range idx[i:j] {
			out[k] = z
		}
		i = j
	}
	copy(x, out)
}

// meanVar returns chain j's mean and unbiased variance.
func meanVar(c []float64) (mean, v float64) {
	for _, x := range c {
		mean += x
	}
	mean /= float64(len(c))
	for _, x := range c {
		v += (x - mean) * (x - mean)
	}
	return mean, v / float64(len(c)-1)
}

// rhat is the potential scale reduction sqrt(var+ / W) with
// var+ = (n-1)/n W + B/n (Gelman et al., Bayesian Data Analysis, 3rd ed.,
// eq. 11.3-11.4).
func rhat(z []float64, m, n int) float64 {
	means := make([]float64, m)
	var w float64
	for j := range m {
		mu, v := meanVar(z[j*n : (j+1)*n])
		means[j] = mu
		w += v
	}
	w /= float64(m)
	_, bOverN := meanVar(means)
	vplus := float64(n-1)/float64(n)*w + bOverN
	return math.Sqrt(vplus / w)
}

// ess is the multi-chain effective sample size m n / tau with
// tau = -1 + 2 sum_k P_k, P_k = rho(2k) + rho(2k+1) truncated at the first
// non-positive pair and made monotone (Geyer 1992, Statist. Sci. 7, 473),
// rho(t) = 1 - (W - mean_j acov_j(t)) / var+, and tau at least
// 1/log10(m n) as in Vehtari et al. (2021).
func ess(z []float64, m, n int) float64 {
	l := fftLen(2 * n)
	fft := fourier.NewFFT(l)
	buf := make([]float64, l)
	coef := make([]complex128, l/2+1)
	power := make([]float64, l/2+1) // sum of the chains' power spectra
	means := make([]float64, m)
	var w float64
	for j := range m {
		c := z[j*n : (j+1)*n]
		mu, v := meanVar(c)
		means[j], w = mu, w+v
		for i, x := range c {
			buf[i] = x - mu
		}
		clear(buf[n:])
		fft.Coefficients(coef, buf)
		for i, q := range coef {
			power[i] += real(q)*real(q) + imag(q)*imag(q)
		}
	}
	// One inverse transform of the summed spectra gives l times the sum of
	// the chains' autocovariance sums; acov is the chains' mean biased
	// autocovariance.
	for i, p := range power {
		coef[i] = complex(p, 0)
	}
	acov := fft.Sequence(buf, coef)[:n]
	for t := range acov {
		acov[t] /= float64(l) * float64(n) * float64(m)
	}
	w /= float64(m)
	_, bOverN := meanVar(means)
	vplus := float64(n-1)/float64(n)*w + bOverN
	rho := func(t int) float64 { return 1 - (w-acov[t])/vplus }
	var tau float64
	prev := math.Inf(1)
	for k := 0; 2*k+1 < n; k++ {
		p := rho(2*k) + rho(2*k+1)
		if k == 0 {
			p = 1 + rho(1)
		}
		if !(p > 0) {
			break
		}
		p = min(p, prev)
		prev = p
		tau += p
	}
	tau = max(2*tau-1, 1/math.Log10(float64(m*n)))
	return float64(m*n) / tau
}
