package fit

// The numeric kernels of the package, in pure Go. They panic if the slices
// differ in length: that is a programmer mistake inside the package.
//
// dot keeps four partial sums so that consecutive multiply-adds do not wait
// on each other; the summation order is fixed, so results are the same on
// every run. kernels_bench_test.go measures both against the plain loops.

// dot returns x·y.
func dot(x, y []float64) float64 {
	if len(x) != len(y) {
		panic("fit: dot of slices of different lengths")
	}
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(x); i += 4 {
		xs, ys := x[i:i+4:i+4], y[i:i+4:i+4]
		s0 += xs[0] * ys[0]
		s1 += xs[1] * ys[1]
		s2 += xs[2] * ys[2]
		s3 += xs[3] * ys[3]
	}
	for ; i < len(x); i++ {
		s0 += x[i] * y[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// axpy adds alpha·x to y in place.
func axpy(alpha float64, x, y []float64) {
	if len(x) != len(y) {
		panic("fit: axpy of slices of different lengths")
	}
	i := 0
	for ; i+4 <= len(x); i += 4 {
		xs, ys := x[i:i+4:i+4], y[i:i+4:i+4]
		ys[0] += alpha * xs[0]
		ys[1] += alpha * xs[1]
		ys[2] += alpha * xs[2]
		ys[3] += alpha * xs[3]
	}
	for ; i < len(x); i++ {
		y[i] += alpha * x[i]
	}
}

// add adds x to y in place: axpy(1, x, y) to the bit (1·x is x), without
// the multiplications.
func add(x, y []float64) {
	if len(x) != len(y) {
		panic("fit: add of slices of different lengths")
	}
	i := 0
	for ; i+4 <= len(x); i += 4 {
		xs, ys := x[i:i+4:i+4], y[i:i+4:i+4]
		ys[0] += xs[0]
		ys[1] += xs[1]
		ys[2] += xs[2]
		ys[3] += xs[3]
	}
	for ; i < len(x); i++ {
		y[i] += x[i]
	}
}

// shrinkAxpyAdd does in one pass what scale(alpha, w), then axpy(step, x,
// w) unless step is 0, then add(w, sum) do in three, to the bit: each w[i]
// becomes alpha·w[i] + step·x[i], and sum[i] gains it.
func shrinkAxpyAdd(alpha, step float64, x, w, sum []float64) {
	if len(x) != len(w) || len(w) != len(sum) {
		panic("fit: shrinkAxpyAdd of slices of different lengths")
	}
	if step == 0 {
		for i := range w {
			w[i] *= alpha
			sum[i] += w[i]
		}
		return
	}
	for i := range w {
		w[i] = float64(alpha*w[i]) + step*x[i] // rounded as scale, then axpy
		sum[i] += w[i]
	}
}

// scale multiplies x by alpha in place.
func scale(alpha float64, x []float64) {
	for i := range x {
		x[i] *= alpha
	}
}
