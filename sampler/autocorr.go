package sampler

import (
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// Autocorr estimates integrated autocorrelation times by FFT. It is a
// reusable workspace for series of one length; it is not safe for concurrent
// use.
//
// For walkers' series x_k(t), t = 0..n-1, of one parameter, the normalised
// autocorrelation function of each walker,
//
//	rho_k(l) = C_k(l) / C_k(0),  C_k(l) = sum_t (x_k(t) - m_k)(x_k(t+l) - m_k),
//
// is computed by a zero-padded FFT, averaged over the walkers into rho(l)
// (Goodman & Weare 2010, CAMCoS 5, 65, sec. 6), and
//
//	tau(M) = 1 + 2 sum_{l=1..M} rho(l)
//
// is evaluated at Sokal's automatic window: the smallest M with
// M >= c tau(M) (Sokal 1997, "Monte Carlo methods in statistical mechanics",
// in Functional Integration, Springer, sec. 3).
type Autocorr struct {
	n     int
	fft   *fourier.FFT
	buf   []float64
	coef  []complex128
	power []float64 // walker-averaged normalised power spectrum
}

// NewAutocorr returns a workspace for series of length n >= 2.
func NewAutocorr(n int) *Autocorr {
	if n < 2 {
		panic("sampler: autocorrelation of a series shorter than 2")
	}
	m := fftLen(2 * n)
	return &Autocorr{n: n, fft: fourier.NewFFT(m), buf: make([]float64, m), coef: make([]complex128, m/2+1), power: make([]float64, m/2+1)}
}

// fftLen returns the smallest 2^a 3^b 5^c >= n: zero padding to at least 2n
// removes the circular wrap-around, and such lengths are fast in gonum's
// FFTPACK port.
func fftLen(n int) int {
	best := math.MaxInt
	for p2 := 1; p2 < 2*n; p2 *= 2 {
		for p3 := p2; p3 < 2*n; p3 *= 3 {
			for p5 := p3; p5 < 2*n; p5 *= 5 {
				if p5 >= n && p5 < best {
					best = p5
				}
			}
		}
	}
	return best
}

// Time returns the integrated autocorrelation time, in steps, of the
// walkers' series (each of the workspace's length) with window constant c
// (Sokal: about 5). ok is false when no window M <= n/2 satisfies
// M >= c tau(M), that is, when the series are too short for a reliable
// estimate; tau is then tau(n/2). (Lags beyond n/2 are not searched: their
// autocorrelations average few products, and since the mean-subtracted
// estimates sum to zero over all lags, tau(M) always falls below M/c near
// M = n, which would report a spurious small tau for a drifting chain.) Series that never change
// carry no autocorrelation information and are left out of the average; if
// all are constant, Time returns +Inf, false.
func (a *Autocorr) Time(series [][]float64, c float64) (tau float64, ok bool) {
	n := a.n
	clear(a.power)
	used := 0
	for _, x := range series {
		if len(x) != n {
			panic("sampler: autocorrelation series length mismatch")
		}
		var mean float64
		for _, v := range x {
			mean += v
		}
		mean /= float64(n)
		var ss float64
		for i, v := range x {
			d := v - mean
			a.buf[i] = d
			ss += d * d
		}
		if !(ss > 0) {
			continue
		}
		used++
		clear(a.buf[n:])
		a.fft.Coefficients(a.coef, a.buf)
		// The inverse transform is linear, so the walkers' normalised
		// autocorrelations C_k(l)/C_k(0) (C_k(0) = ss) are averaged as power
		// spectra and transformed back once.
		w := 1 / ss
		for i, z := range a.coef {
			a.power[i] += w * (real(z)*real(z) + imag(z)*imag(z))
		}
	}
	if used == 0 {
		return math.Inf(1), false
	}
	for i, p := range a.power {
		a.coef[i] = complex(p, 0)
	}
	acf := a.fft.Sequence(a.buf, a.coef)
	inv := 1 / acf[0]
	tau = 1
	for m := 1; m <= n/2; m++ {
		tau += 2 * acf[m] * inv
		if float64(m) >= c*tau {
			return tau, true
		}
	}
	return tau, false
}

// IntegratedTime returns the integrated autocorrelation time of one
// parameter from the walkers' series (all of one length >= 2) with Sokal's
// window constant c; see Autocorr.Time. It allocates a workspace; use
// Autocorr for repeated calls.
func IntegratedTime(series [][]float64, c float64) (tau float64, ok bool) {
	if len(series) == 0 {
		return math.NaN(), false
	}
	return NewAutocorr(len(series[0])).Time(series, c)
}
