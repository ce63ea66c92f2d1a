package grid

import (
	"fmt"
	"sync"

	"github.com/filigree-survey/filigree/internal/parallel"
	"gonum.org/v1/gonum/dsp/fourier"
)

// FFT is a planned 3D real↔complex discrete Fourier transform of an N³
// periodic grid, built from gonum's 1D transforms (FFTPACK, Swarztrauber
// 1982). It is safe for one goroutine at a time; each call spreads its
// lines over all cores with parallel.For. Every 1D line is transformed by
// the same code whichever goroutine takes it, so results are bit-for-bit
// independent of GOMAXPROCS.
//
// The transform needs no full-size scratch grid: the real-to-complex pass
// along z writes straight into the half-spectrum layout and the passes
// along y and x work in place on it, one plane of N·(N/2+1) values per
// goroutine at a time.
type FFT struct {
	n    int
	pool sync.Pool // *fftWork
}

// fftWork is one goroutine's plans and buffers.
type fftWork struct {
	r     *fourier.FFT
	c     *fourier.CmplxFFT
	cline []complex128 // N/2+1 values
	plane []complex128 // N·(N/2+1) values, stored [k][line]
}

// NewFFT returns an FFT for grids of n cells per side. It returns an error
// unless n is even and at least 2.
func NewFFT(n int) (*FFT, error) {
	if n < 2 || n%2 != 0 {
		return nil, fmt.Errorf("grid: FFT size %d, want an even number ≥ 2", n)
	}
	f := &FFT{n: n}
	h := n/2 + 1
	f.pool.New = func() any {
		return &fftWork{
			r:     fourier.NewFFT(n),
			c:     fourier.NewCmplxFFT(n),
			cline: make([]complex128, h),
			plane: make([]complex128, n*h),
		}
	}
	return f, nil
}

// N returns the number of cells per side the FFT was planned for.
func (f *FFT) N() int { return f.n }

// Forward sets dst to the unnormalised forward transform of the real field
// src: dst[KIndex(i,j,k)] = Σ_x src[x]·exp(−i k·x), the convention of
// numpy.fft.rfftn. src (len N³) is not modified; dst has len N·N·(N/2+1).
// It panics on a length mismatch.
func (f *FFT) Forward(dst []complex128, src []float64) {
	n := f.n
	h := n/2 + 1
	if len(src) != n*n*n || len(dst) != n*n*h {
		panic(fmt.Sprintf("grid: Forward lengths %d, %d, want %d, %d", len(src), len(dst), n*n*n, n*n*h))
	}
	// Pass 1, per x-plane: real transforms along z, then complex
	// transforms along y, through a transposed plane buffer so that every
	// 1D transform reads contiguous memory.
	parallel.For(n, 1, func(lo, hi int) {
		w := f.pool.Get().(*fftWork)
		defer f.pool.Put(w)
		for i := lo; i < hi; i++ {
			for j := 0; j < n; j++ {
				off := (i*n + j) * n
				w.r.Coefficients(w.cline, src[off:off+n])
				for k, v := range w.cline {
					w.plane[k*n+j] = v
				}
			}
			f.linesAndScatter(w, dst, i*n*h, h, true)
		}
	})
	f.passX(dst, true)
}

// Inverse sets dst to the normalised inverse transform of the half
// spectrum src: dst[x] = N⁻³ Σ_k F(k)·exp(+i k·x) over the full spectrum,
// the missing half taken as the Hermitian partner F(−k) = F(k)*, so that
// Inverse(Forward(x)) = x (numpy.fft.irfftn). As there, the imaginary parts
// of the self-conjugate modes on the z = 0 and z = N/2 planes are ignored.
//
// Inverse overwrites src (it is used as the workspace), so keep a copy if
// the spectrum is needed again. It panics on a length mismatch.
func (f *FFT) Inverse(dst []float64, src []complex128) {
	n := f.n
	h := n/2 + 1
	if len(dst) != n*n*n || len(src) != n*n*h {
		panic(fmt.Sprintf("grid: Inverse lengths %d, %d, want %d, %d", len(dst), len(src), n*n*n, n*n*h))
	}
	f.passX(src, false)
	norm := 1 / float64(n*n*n)
	parallel.For(n, 1, func(lo, hi int) {
		w := f.pool.Get().(*fftWork)
		defer f.pool.Put(w)
		for i := lo; i < hi; i++ {
			base := i * n * h
			for j := 0; j < n; j++ {
				row := src[base+j*h : base+(j+1)*h]
				for k, v := range row {
					w.plane[k*n+j] = v
				}
			}
			for k := 0; k < h; k++ {
				line := w.plane[k*n : (k+1)*n]
				w.c.Sequence(line, line)
			}
			for j := 0; j < n; j++ {
				for k := 0; k < h; k++ {
					w.cline[k] = w.plane[k*n+j]
				}
				out := dst[(i*n+j)*n : (i*n+j+1)*n]
				w.r.Sequence(out, w.cline)
				for x := range out {
					out[x] *= norm
				}
			}
		}
	})
}

// linesAndScatter transforms the h lines of w.plane (each N long, stored
// [k][line]) forward or backward and writes them back to the x-plane of
// spec starting at base, where line index j goes to base + j·h + k.
func (f *FFT) linesAndScatter(w *fftWork, spec []complex128, base, h int, forward bool) {
	n := f.n
	for k := 0; k < h; k++ {
		line := w.plane[k*n : (k+1)*n]
		if forward {
			w.c.Coefficients(line, line)
		} else {
			w.c.Sequence(line, line)
		}
	}
	for j := 0; j < n; j++ {
		row := spec[base+j*h : base+(j+1)*h]
		for k := range row {
			row[k] = w.plane[k*n+j]
		}
	}
}

// passX transforms spec in place along x (the slowest axis), one y-slab
// (all i and k at fixed j) per step: gathering a slab reads N contiguous
// runs of N/2+1 values, which keeps the strided axis cache-friendly.
func (f *FFT) passX(spec []complex128, forward bool) {
	n := f.n
	h := n/2 + 1
	parallel.For(n, 1, func(lo, hi int) {
		w := f.pool.Get().(*fftWork)
		defer f.pool.Put(w)
		for j := lo; j < hi; j++ {
			for i := 0; i < n; i++ {
				row := spec[(i*n+j)*h : (i*n+j+1)*h]
				for k, v := range row {
					w.plane[k*n+i] = v
				}
			}
			for k := 0; k < h; k++ {
				line := w.plane[k*n : (k+1)*n]
				if forward {
					w.c.Coefficients(line, line)
				} else {
					w.c.Sequence(line, line)
				}
			}
			for i := 0; i < n; i++ {
				row := spec[(i*n+j)*h : (i*n+j+1)*h]
				for k := range row {
					row[k] = w.plane[k*n+i]
				}
			}
		}
	})
}

// FastSize returns the smallest even n' ≥ n (and ≥ 2) whose prime factors
// are all 2, 3 or 5. The FFT (gonum's fourier, a mixed-radix transform)
// runs fastest on such sizes: a size with a large prime factor, such as
// 356 = 4·89, takes several times as long per cell as its neighbour
// 360 = 2³·3²·5.
func FastSize(n int) int {
	n = max(n, 2)
	for n += n % 2; !smooth235(n); n += 2 {
	}
	return n
}

// FastSizeBelow returns the largest even n' ≤ n (and ≥ 2) whose prime
// factors are all 2, 3 or 5: FastSize for a cap.
func FastSizeBelow(n int) int {
	for n -= n % 2; n > 2; n -= 2 {
		if smooth235(n) {
			return n
		}
	}
	return 2
}

// smooth235 reports whether n > 0 has no prime factor other than 2, 3, 5.
func smooth235(n int) bool {
	for _, p := range [...]int{2, 3, 5} {
		for n%p == 0 {
			n /= p
		}
	}
	return n == 1
}
