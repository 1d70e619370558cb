package lbl

// Helpers of the package's own tests, for the tests in package lbl_test
// (which read line lists and partition sums through package hitran, which
// package lbl's own tests cannot import).
var (
	UniformGrid = uniformGrid
)
