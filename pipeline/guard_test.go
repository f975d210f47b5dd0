package pipeline

import "testing"

func TestGuard(t *testing.T) {
	// 4 rows × 4 features: feature 1 is constant, feature 3 varies by 1e-4
	// (below 5% of the median deviation), features 0 and 2 vary by ~1.
	X := []float32{
		0, 5, 2, 1e-4,
		1, 5, 0, 0,
		2, 5, 1, 1e-4,
		3, 5, 3, 0,
	}
	g := fitGuard(GuardConfig{}.withDefaults(), X, 4, 4)
	if g.out() != 2 || g.keep[0] != 0 || g.keep[1] != 2 {
		t.Fatalf("kept %v; want [0 2]", g.keep)
	}
	dst := make([]float32, 2)
	g.apply(dst, []float32{-7, 5, 9, 1})
	if dst[0] != 0 || dst[1] != 3 {
		t.Errorf("clipped %v; want [0 3] (training ranges [0,3] and [0,3])", dst)
	}
	all := fitGuard(GuardConfig{MinStd: -1, Clip: ClipNone}, X, 4, 4)
	if all.out() != 4 || all.lo != nil {
		t.Errorf("MinStd −1 / Clip none kept %d features, bounds %v; want all 4, none", all.out(), all.lo)
	}
	// In-place compaction, as Fit does it.
	Y := append([]float32(nil), X...)
	for i := 0; i < 4; i++ {
		g.apply(Y[i*2:(i+1)*2], Y[i*4:(i+1)*4])
	}
	want := []float32{0, 2, 1, 0, 2, 1, 3, 3}
	for i, v := range want {
		if Y[i] != v {
			t.Fatalf("in-place compaction gave %v; want %v", Y[:8], want)
		}
	}
	if err := (GuardConfig{MinStd: 1}).withDefaults().validate(); err == nil {
		t.Error("MinStd 1 accepted")
	}
}
