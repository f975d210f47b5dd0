package datasets

import (
	"math"
	"math/rand/v2"
	"slices"
)

// newRand returns the package's deterministic generator for a seed and a
// purpose tag, so that different uses of one seed draw independent streams.
// PCG (math/rand/v2) is specified exactly, so streams are stable across
// platforms and Go releases.
func newRand(seed uint64, tag uint64) *rand.Rand {
	return rand.New(rand.NewPCG(seed, tag^0x9E3779B97F4A7C15))
}

// Stream tags for newRand.
const (
	tagSplit uint64 = iota + 1
	tagPerClass
	tagPatches
	tagNoise
)

// byClass returns, for each class 0..max(labels), the indices with that
// label in increasing order. Negative labels are ignored.
func byClass(labels []int) [][]int {
	k := 0
	for _, l := range labels {
		k = max(k, l+1)
	}
	groups := make([][]int, k)
	for i, l := range labels {
		if l >= 0 {
			groups[l] = append(groups[l], i)
		}
	}
	return groups
}

// shuffledClass returns the members of one class in a seeded random order
// that depends only on (seed, tag, class), never on the other classes.
func shuffledClass(members []int, seed, tag uint64, class int) []int {
	out := append([]int(nil), members...)
	r := newRand(seed^uint64(class)*0xBF58476D1CE4E5B9, tag)
	r.Shuffle(len(out), func(i, j int) { out[i], out[j] = out[j], out[i] })
	return out
}

// StratifiedSplit divides the indices 0..len(labels)-1 into a training and a
// test part so that each class keeps its proportion: class c with n_c members
// puts round(testFrac·n_c) of them, chosen at random by seed, into test. Both
// results are sorted. testFrac is clamped to [0,1].
func StratifiedSplit(labels []int, testFrac float64, seed uint64) (train, test []int) {
	testFrac = math.Min(1, math.Max(0, testFrac))
	for c, members := range byClass(labels) {
		sh := shuffledClass(members, seed, tagSplit, c)
		k := int(math.Round(testFrac * float64(len(sh))))
		test = append(test, sh[:k]...)
		train = append(train, sh[k:]...)
	}
	slices.Sort(train)
	slices.Sort(test)
	return train, test
}

// PerClass returns a seeded subset holding min(perClass, n_c) images of each
// class c, sorted. For one seed the subsets are nested: the subset for k is
// contained in the subset for any k' > k, so label-efficiency curves compare
// like with like.
func PerClass(labels []int, perClass int, seed uint64) []int {
	var out []int
	for c, members := range byClass(labels) {
		sh := shuffledClass(members, seed, tagPerClass, c)
		out = append(out, sh[:min(max(perClass, 0), len(sh))]...)
	}
	slices.Sort(out)
	return out
}
