package fit

// The numeric kernels of the package, in pure Go. Both panic if the
// slices differ in length: that is a programmer mistake inside the package.

// dot returns x·y.
func dot(x, y []float64) float64 {
	if len(x) != len(y) {
		panic("fit: dot of slices of different lengths")
	}
	var sum float64
	for i, v := range x {
		sum += v * y[i]
	}
	return sum
}

// axpy adds alpha·x to y in place.
func axpy(alpha float64, x, y []float64) {
	if len(x) != len(y) {
		panic("fit: axpy of slices of different lengths")
	}
	for i, v := range x {
		y[i] += alpha * v
	}
}

// scale multiplies x by alpha in place.
func scale(alpha float64, x []float64) {
	for i := range x {
		x[i] *= alpha
	}
}
