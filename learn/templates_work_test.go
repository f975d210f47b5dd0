package learn

import (
	"runtime"
	"testing"
)

// TestTemplateWorkMatches: the shapes Work derives from the configuration
// alone are the ones a fitted layer gives (OutLen, EncodeMaps' maps), and
// its Encode bound is within a factor of 2 of what a first Encode on fresh
// scratch allocates (TotalAlloc also counts the buffers regrown from one
// scale to the next, which the bound, a peak of live buffers, does not).
func TestTemplateWorkMatches(t *testing.T) {
	maps := randomMaps(6, 3, 20, 18, 4)
	for _, cfg := range []TemplateConfig{
		{K: 8, PatchSize: 3, Patches: 200, Iters: 2, Seed: 1},
		{K: 5, PatchSize: 4, Stride: 2, Patches: 200, Iters: 2, Encoder: EncodeTriangle, Grids: []int{1, 3}, MapPool: 2, Seed: 2},
		{K: 6, PatchSize: 3, Patches: 200, Iters: 2, Scales: []float64{1, 1.5}, Seed: 3},
	} {
		tm := fitTemplates(t, cfg, maps)
		m := &maps[0]
		wk, err := cfg.Work(m.C, m.H, m.W)
		if err != nil {
			t.Fatal(err)
		}
		n, err := tm.OutLen(m.C, m.H, m.W)
		if err != nil || n != wk.OutLen {
			t.Errorf("%+v: Work.OutLen %d, OutLen %d (%v)", cfg, wk.OutLen, n, err)
		}
		out := tm.EncodeMaps(nil, m)
		if out.C != wk.OutC || out.H != wk.OutH || out.W != wk.OutW {
			t.Errorf("%+v: Work gives %d×%d×%d, EncodeMaps %d×%d×%d", cfg, wk.OutC, wk.OutH, wk.OutW, out.C, out.H, out.W)
		}
		tm2 := fitTemplates(t, cfg, maps) // empty scratch pool
		var a, b runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&a)
		tm2.Encode(nil, m)
		runtime.ReadMemStats(&b)
		got := int64(b.TotalAlloc - a.TotalAlloc)
		if wk.Encode < got/2 || wk.Encode > 2*got {
			t.Errorf("%+v: Work.Encode %d bytes; a first Encode allocated %d", cfg, wk.Encode, got)
		}
		t.Logf("Encode: bound %d, allocated %d", wk.Encode, got)
	}
	if _, err := (TemplateConfig{PatchSize: 30}).Work(3, 20, 20); err == nil {
		t.Error("maps smaller than the patch: no error")
	}
}
