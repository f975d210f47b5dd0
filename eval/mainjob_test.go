package eval

import (
	"testing"

	"github.com/striate/striate/pipeline"
)

// TestMainJobSpecsDifferOnlyInBank: the two pipelines of the main job are
// the same configuration with the same seed, except that the learned one
// asks Fit to learn its simple-cell bank (so the comparison isolates the
// bank).
func TestMainJobSpecsDifferOnlyInBank(t *testing.T) {
	base, err := demoConfig(nil, "garments")
	if err != nil {
		t.Fatal(err)
	}
	specs := mainJobSpecs(base, 7)
	if len(specs) != 2 || specs[0].name != "hand-set" || specs[1].name != "learned" {
		t.Fatalf("specs %v", specs)
	}
	hand, learned := specs[0].cfg, specs[1].cfg
	if hand.Seed != 7 || learned.Seed != 7 || hand.LearnBank != nil || learned.LearnBank == nil || learned.Front.Bank != nil {
		t.Errorf("hand seed %d bank %v; learned seed %d bank %v", hand.Seed, hand.LearnBank, learned.Seed, learned.LearnBank)
	}
	learned.LearnBank = nil
	a, _ := hand.MarshalIndent()
	b, _ := learned.MarshalIndent()
	if string(a) != string(b) {
		t.Errorf("the pipelines differ beyond the bank:\n%s\n%s", a, b)
	}
}

// TestDemoConfig: without a configuration each dataset gets its preset with
// MainJobHead (half the epochs when mirror doubles the rows); a given
// configuration is used as it is.
func TestDemoConfig(t *testing.T) {
	for _, preset := range []string{"garments", "digits"} {
		c, err := demoConfig(nil, preset)
		if err != nil {
			t.Fatal(err)
		}
		want := MainJobHead.Epochs
		if c.Mirror {
			want = max(1, want/2)
		}
		if c.Head.Hidden != MainJobHead.Hidden || c.Head.Epochs != want {
			t.Errorf("%s: head %+v; want MainJobHead with %d epochs", preset, c.Head, want)
		}
	}
	own := pipeline.DefaultConfig()
	own.Seed = 99
	if c, err := demoConfig(&own, "digits"); err != nil || c.Seed != 99 || c.Head != own.Head {
		t.Errorf("own config not used as given: %+v, %v", c.Head, err)
	}
	q := sizesFor(true)
	c := pipeline.DefaultConfig()
	c.LearnBank = &pipeline.LearnBankConfig{}
	q.shrink(&c)
	if c.LearnBank.Patches != q.bankPatches || c.Unlabeled != q.unlabeled || c.HeadMinSteps != q.headMinSteps {
		t.Errorf("quick budgets not applied: %+v", c.LearnBank)
	}
}

// stepMonitor records each step's total and the last count it reached.
type stepMonitor struct{ totals, last map[string]int }

func (m stepMonitor) Start(total int, what string) JobProgress {
	m.totals[what] = total
	return stepBar{m, what}
}
func (stepMonitor) Logf(string, ...any) {}

type stepBar struct {
	m    stepMonitor
	what string
}

func (b stepBar) Step(done, _ int, _ string) { b.m.last[b.what] = done }
func (stepBar) Done()                        {}

// TestBeltStep: the belt step chooses the threshold on validation scenes
// and scores the given number of test scenes with it, its progress bar
// counts the test scenes to their total, the choice's bar has no length
// it could not keep, and the report's gallery is drawn from the frames in
// memory (contract test of the wiring; scoring is ScoreScenes').
func TestBeltStep(t *testing.T) {
	m := beltModel(t)
	test := beltItems(150, 7)
	test.Name = "belt-test"
	mon := stepMonitor{map[string]int{}, map[string]int{}}
	sz := beltSizes{val: 5, test: 4}
	res, st, err := beltStep(m, "tiny", beltItems(150, 5), test, sz, "belt items", 3, 2, mon)
	if err != nil {
		t.Fatal(err)
	}
	if res.Scores.Frames != sz.test || st.Scenes != sz.val || res.Threshold != st.Config.Threshold || res.Gallery == nil {
		t.Fatalf("belt step: %d frames scored, %d validation scenes, threshold %v (stored %v), gallery %d bytes",
			res.Scores.Frames, st.Scenes, res.Threshold, st.Config.Threshold, len(res.Gallery))
	}
	if mon.totals["belt belt-test"] != sz.test || mon.last["belt belt-test"] != sz.test {
		t.Errorf("belt bar: total %d, reached %d; want %d", mon.totals["belt belt-test"], mon.last["belt belt-test"], sz.test)
	}
	if mon.totals["threshold (5 scenes)"] != 0 {
		t.Errorf("threshold bar promised %d steps it never reports", mon.totals["threshold (5 scenes)"])
	}
	// The same seed gives the same scores.
	res2, _, err := beltStep(m, "tiny", beltItems(150, 5), test, sz, "belt items", 3, 1, mon)
	if err != nil || res2.Scores.Found != res.Scores.Found || res2.Scores.Matched != res.Scores.Matched {
		t.Errorf("belt step not reproducible: %v, found %d vs %d", err, res2.Scores.Found, res.Scores.Found)
	}
}

// TestUnfitted: the images a subset left out, in order.
func TestUnfitted(t *testing.T) {
	s := beltItems(10, 1)
	u := unfitted(s, []int{0, 3, 4, 9})
	if u.N != 6 || u.Labels[0] != s.Labels[1] || u.Labels[2] != s.Labels[5] {
		t.Fatalf("unfitted: %d images, labels %v of %v", u.N, u.Labels, s.Labels)
	}
}
