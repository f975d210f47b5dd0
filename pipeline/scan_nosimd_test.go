//go:build !(goexperiment.simd && amd64)

package pipeline_test

// simdBuild tells the long runs which speed targets apply (the plain build's).
const simdBuild = false
