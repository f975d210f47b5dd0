package eval

import (
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

// TestSuiteHeading checks that the suite section is titled after the
// conditions the results hold: a held-out run was once headed, and described,
// as the development suite, on which settings are chosen.
func TestSuiteHeading(t *testing.T) {
	res := func(groups ...string) []*SuiteResult {
		r := &SuiteResult{}
		for _, g := range groups {
			r.Points = append(r.Points, SuitePoint{Group: g})
		}
		return []*SuiteResult{r}
	}
	for _, c := range []struct {
		groups            []string
		title, has, lacks string
	}{
		{[]string{datasets.GroupMNISTC, datasets.GroupGrid}, "Development suite", "15 MNIST-C", "held-out"},
		{[]string{datasets.GroupHeldOut}, "Held-out suite", "no setting is ever chosen", "MNIST-C corruptions of"},
		{[]string{datasets.GroupMNISTC, datasets.GroupHeldOut}, "Development and held-out suites", "no setting is ever chosen", ""},
	} {
		title, text := suiteHeading(res(c.groups...))
		if !strings.HasPrefix(title, c.title) {
			t.Errorf("%v: title %q, want it to start %q", c.groups, title, c.title)
		}
		if !strings.Contains(text, c.has) {
			t.Errorf("%v: text lacks %q: %s", c.groups, c.has, text)
		}
		if c.lacks != "" && strings.Contains(text, c.lacks) {
			t.Errorf("%v: text has %q: %s", c.groups, c.lacks, text)
		}
	}
}
