package pipeline

import (
	"fmt"
	"strings"

	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// templateStage is the optional stack of template layers between the front
// end and the head. Layer i < L−1 turns maps into the response maps layer
// i+1 sees (learn.Templates.EncodeMaps); the last layer pools them into the
// feature vector (learn.Templates.Encode). Unless Pool.Keep is false, the pooled front-end
// maps (PoolConfig) follow the template features in the vector.
type templateStage struct {
	layers []*learn.Templates
	n      int // template features
	keep   int // pooled front-end features appended (0 without keep)
	pool   PoolConfig
	ph, pw int
}

func (t *templateStage) outLen() int { return t.n + t.keep }

// encode writes the features of the front-end maps m into dst (length outLen).
func (t *templateStage) encode(dst []float32, m *v1layer.Maps, w *work) {
	cur := m
	for i, l := range t.layers[:len(t.layers)-1] {
		if len(w.stack) < len(t.layers) {
			w.stack = make([]v1layer.Maps, len(t.layers))
		}
		l.EncodeMaps(&w.stack[i], cur)
		cur = &w.stack[i]
	}
	t.layers[len(t.layers)-1].Encode(dst[:t.n:t.n], cur)
	if t.keep > 0 {
		poolGrid(dst[t.n:], m, t.pool, t.ph, t.pw)
	}
}

// newTemplateStage checks the layers against the front end's output shape
// and works out the feature length.
func newTemplateStage(p *Plan, layers []*learn.Templates) (*templateStage, error) {
	c, h, w := p.c, p.oh, p.ow
	for i, l := range layers {
		if l.Channels() != c {
			return nil, fmt.Errorf("pipeline: template layer %d expects %d channels; the stage before it gives %d", i, l.Channels(), c)
		}
		if i == len(layers)-1 {
			n, err := l.OutLen(c, h, w)
			if err != nil {
				return nil, fmt.Errorf("pipeline: template layer %d on %d×%d×%d maps: %w", i, c, h, w, err)
			}
			t := &templateStage{layers: layers, n: n, pool: p.cfg.Pool, ph: p.ph, pw: p.pw}
			if p.cfg.Pool.keep() {
				t.keep = p.c * p.ph * p.pw
			}
			return t, nil
		}
		// The shape EncodeMaps gives, from the configuration alone (no
		// probe pass: its buffers would grow with positions × K).
		wk, err := l.Config().Work(c, h, w)
		if err != nil {
			return nil, fmt.Errorf("pipeline: template layer %d: %w", i, err)
		}
		c, h, w = wk.OutC, wk.OutH, wk.OutW
	}
	return nil, fmt.Errorf("pipeline: no template layers")
}

// fitTemplates fits the template layers in order on the front-end maps of
// the unlabeled images (each later layer on the previous layer's response
// maps), on workers goroutines (the layers do not depend on their number).
// cfgs have their seeds resolved.
func fitTemplates(p *Plan, cfgs []learn.TemplateConfig, maps []v1layer.Maps, workers int, prog learn.Progress) (*templateStage, error) {
	var layers []*learn.Templates
	for i, tc := range cfgs {
		if i > 0 {
			prev := layers[i-1]
			next := make([]v1layer.Maps, len(maps))
			parallelFor(len(maps), workers, func() struct{} { return struct{}{} }, func(struct{}) {}, func(j int, _ struct{}) {
				prev.EncodeMaps(&next[j], &maps[j])
			})
			maps = next
		}
		t, _, err := tc.FitWith(maps, learn.TemplateFitOptions{Workers: workers, Progress: prefixed{prog, fmt.Sprintf("templates %d: ", i)}})
		if err != nil {
			return nil, fmt.Errorf("pipeline: fitting template layer %d: %w", i, err)
		}
		layers = append(layers, t)
	}
	return newTemplateStage(p, layers)
}

// prefixed adds a phase name to progress messages.
type prefixed struct {
	p      learn.Progress
	prefix string
}

func (q prefixed) Step(done, total int, msg string) {
	if q.p != nil {
		q.p.Step(done, total, q.prefix+msg)
	}
}

// tensors returns the layers' tensors, renamed templates.<layer>.<name>.
func (t *templateStage) tensors() []learn.NamedTensor {
	var out []learn.NamedTensor
	for i, l := range t.layers {
		for _, nt := range l.Tensors() {
			nt.Name = fmt.Sprintf("%s%d.%s", tmplTensorPrefix, i, nt.Name)
			out = append(out, nt)
		}
	}
	return out
}

// loadTemplates rebuilds the template layers the config names from the
// tensors of a model file.
func loadTemplates(p *Plan, ts []learn.NamedTensor) (*templateStage, error) {
	cfgs := p.cfg.Templates
	if len(cfgs) == 0 {
		if len(ts) != 0 {
			return nil, fmt.Errorf("the config has no template layer but the file holds %d template tensors", len(ts))
		}
		return nil, nil
	}
	per := make([][]learn.NamedTensor, len(cfgs))
	for _, nt := range ts {
		rest := strings.TrimPrefix(nt.Name, tmplTensorPrefix)
		var i int
		var name string
		if k := strings.IndexByte(rest, '.'); k > 0 {
			if _, err := fmt.Sscanf(rest[:k], "%d", &i); err == nil && fmt.Sprint(i) == rest[:k] {
				name = rest[k+1:]
			}
		}
		if name == "" || i < 0 || i >= len(cfgs) {
			return nil, fmt.Errorf("tensor %q: want %s<layer>.<name> with layer in [0, %d)", nt.Name, tmplTensorPrefix, len(cfgs))
		}
		nt.Name = name
		per[i] = append(per[i], nt)
	}
	layers := make([]*learn.Templates, len(cfgs))
	for i := range cfgs {
		l, err := learn.NewTemplatesFromTensors(cfgs[i], per[i])
		if err != nil {
			return nil, fmt.Errorf("layer %d: %w", i, err)
		}
		layers[i] = l
	}
	return newTemplateStage(p, layers)
}
