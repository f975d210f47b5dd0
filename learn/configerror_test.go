package learn

import (
	"errors"
	"testing"
)

// TestConfigErrorNamesField: Validate reports a bad field by its Go name
// and its JSON key path, nested structs included, before any data is seen.
func TestConfigErrorNamesField(t *testing.T) {
	cases := []struct {
		err        error
		field, key string
	}{
		{TemplateConfig{Method: "kmeanz"}.Validate(), "Method", "method"},
		{TemplateConfig{K: -5}.Validate(), "K", "k"},
		{TemplateConfig{PatchSize: 99}.Validate(), "PatchSize", "patch_size"},
		{TemplateConfig{Grids: []int{2, 40}}.Validate(), "Grids[1]", "grids[1]"},
		{TemplateConfig{Sparse: &DictConfig{Coder: CoderConfig{Solver: "lars"}}}.Validate(), "Sparse.Coder.Solver", "sparse.coder.solver"},
		{TemplateConfig{Sparse: &DictConfig{Forget: -1}}.Validate(), "Sparse.Forget", "sparse.forget"},
		{HeadConfig{Kind: "mpl"}.Validate(), "Kind", "kind"},
		{HeadConfig{ValFrac: 0.95}.Validate(), "ValFrac", "val_frac"},
		{DictConfig{BatchSize: -1}.Validate(), "BatchSize", "batch_size"},
		{DictConfig{Lambda: -1}.Validate(), "Lambda", "lambda"},
	}
	for _, c := range cases {
		var ce *ConfigError
		if !errors.As(c.err, &ce) {
			t.Errorf("%s: error %v; want a *ConfigError", c.field, c.err)
			continue
		}
		if ce.Field != c.field || ce.Key != c.key {
			t.Errorf("error %q names %s / %s; want %s / %s", ce, ce.Field, ce.Key, c.field, c.key)
		}
	}
	for _, err := range []error{TemplateConfig{}.Validate(), HeadConfig{}.Validate(), DictConfig{}.Validate(),
		TemplateConfig{Method: MethodSparse, Sparse: &DictConfig{}}.Validate()} {
		if err != nil {
			t.Errorf("a default config is rejected: %v", err)
		}
	}
}
