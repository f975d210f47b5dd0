package pipeline

import (
	"fmt"

	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// templateStage is the optional template layer between the front end and
// the head.
type templateStage struct {
	n int
}

func (t *templateStage) outLen() int { return t.n }

func (t *templateStage) encode(dst []float32, m *v1layer.Maps) {}

func (t *templateStage) tensors() []learn.NamedTensor { return nil }

func loadTemplates(p *shapes, ts []learn.NamedTensor) (*templateStage, error) {
	if len(ts) != 0 {
		return nil, fmt.Errorf("the config has no template layer but the file holds %d template tensors", len(ts))
	}
	return nil, nil
}
