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
