package pipeline

import (
	"reflect"
	"strings"
	"testing"

	"github.com/striate/striate/learn"
)

func TestConfigJSONRoundTrip(t *testing.T) {
	c := DefaultConfig()
	b, err := c.MarshalIndent()
	if err != nil {
		t.Fatal(err)
	}
	got, err := ParseConfig(strings.NewReader(string(b)))
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got.withDefaults(), c) {
		t.Fatalf("JSON round trip changed the default config:\n%s", b)
	}
	// The zero value means the defaults.
	if !reflect.DeepEqual(Config{}.withDefaults(), c) {
		t.Fatal("Config{} does not mean DefaultConfig()")
	}
}

func TestConfigUnknownKeys(t *testing.T) {
	cases := map[string]string{
		`{"hed":{}}`:                            `"hed"`,
		`{"head":{"epoch":3}}`:                  `"head.epoch"`,
		`{"front":{"gabor":{"orientation":8}}}`: `"front.gabor.orientation"`,
		`{"templates":[{"k":8,"patchsize":3}]}`: `"templates[0].patchsize"`,
		`{"input":{"hieght":32}}`:               `"input.hieght"`,
	}
	for in, key := range cases {
		_, err := ParseConfig(strings.NewReader(in))
		if err == nil || !strings.Contains(err.Error(), "key "+key+" is unknown") {
			t.Errorf("%s: error %v; want it to name %s", in, err, key)
		}
	}
}

func TestConfigValidate(t *testing.T) {
	cases := map[string]string{
		`{"input":{"height":4}}`:                                "input size",
		`{"input":{"normalize":"zscore"}}`:                      "input.normalize",
		`{"input":{"denoise":"median5"}}`:                       "input.denoise",
		`{"pool":{"size":40}}`:                                  "pool.size",
		`{"pool":{"size":2,"stride":3}}`:                        "pool.stride",
		`{"pool":{"size":2,"op":"sum"}}`:                        "pool.op",
		`{"templates":[{"patch_size":20}]}`:                     "patch_size 20",
		`{"guard":{"min_std":2}}`:                               "guard.min_std",
		`{"unlabeled":-5}`:                                      "unlabeled",
		`{"front":{"gabor":{"orientations":99}}}`:               "pipeline: front: v1layer",
		`{"learn_bank":{"patch_size":40}}`:                      "learn_bank.patch_size",
		`{"templates":[{},{},{},{},{}]}`:                        "template layers",
		`{"input":{"height":16,"width":16},"pool":{"size":16}}`: "pool.size 16",
	}
	for in, want := range cases {
		_, err := ParseConfig(strings.NewReader(in))
		if err == nil || !strings.Contains(err.Error(), want) || !strings.HasPrefix(err.Error(), "pipeline: ") {
			t.Errorf("%s: error %v; want a pipeline error mentioning %q", in, err, want)
		}
	}
	if _, err := ParseConfig(strings.NewReader(`{"templates":[], "head":{"kind":"softmax"}}`)); err != nil {
		t.Errorf("a valid config was rejected: %v", err)
	}
}

func TestWithMinSteps(t *testing.T) {
	h := learn.HeadConfig{Epochs: 15}
	// 60000 rows: 54000 train rows / 128 = 421 steps per epoch, 15 epochs
	// give 6315 ≥ 3000: unchanged.
	if got := withMinSteps(h, 60000, 3000); got.Epochs != 15 {
		t.Errorf("60000 rows: %d epochs; want 15", got.Epochs)
	}
	// 100 rows: 90 train rows, one batch of 90 per epoch → 3000 epochs.
	if got := withMinSteps(h, 100, 3000); got.Epochs != 3000 {
		t.Errorf("100 rows: %d epochs; want 3000", got.Epochs)
	}
	// 1000 rows: 900 train rows / 128 = 7 steps per epoch → ceil(3000/7) = 429.
	if got := withMinSteps(h, 1000, 3000); got.Epochs != 429 {
		t.Errorf("1000 rows: %d epochs; want 429", got.Epochs)
	}
	if got := withMinSteps(h, 100, -1); got.Epochs != 15 {
		t.Errorf("no minimum: %d epochs; want 15", got.Epochs)
	}
}

// TestPresets: each preset is a valid config that differs from the default
// only where its description says, and an unknown name is an error listing
// the known ones.
func TestPresets(t *testing.T) {
	def := DefaultConfig()
	for _, name := range PresetNames() {
		c, err := Preset(name)
		if err != nil {
			t.Fatal(err)
		}
		if err := c.Validate(); err != nil {
			t.Errorf("preset %s: %v", name, err)
		}
		if PresetAbout(name) == "" {
			t.Errorf("preset %s has no description", name)
		}
		want := def
		switch name {
		case "digits":
			want.Input.Deskew, want.Input.Denoise, want.Input.Deblur = DeskewShear, DenoiseSmooth, DeblurAuto
		case "garments":
			want.Mirror, want.Pool.Sqrt, want.Input.Upright, want.Input.Denoise, want.Input.Deblur = true, true, UprightVertical, DenoiseSmooth, DeblurAuto
		}
		a, _ := c.MarshalIndent()
		b, _ := want.MarshalIndent()
		if string(a) != string(b) {
			t.Errorf("preset %s:\n%s\nwant\n%s", name, a, b)
		}
	}
	if _, err := Preset("socks"); err == nil || !strings.Contains(err.Error(), "garments") {
		t.Errorf("unknown preset: error %v; want one listing the presets", err)
	}
}

// TestConfigRejectedAtParseTime: configurations that used to pass
// ParseConfig and fail inside Fit are rejected when parsed, with the JSON
// path of the bad field and the valid values in the message.
func TestConfigRejectedAtParseTime(t *testing.T) {
	cases := []struct{ in, path, valid string }{
		{`{"head":{"kind":"mpl"}}`, `head.kind "mpl"`, `"softmax" or "mlp"`},
		{`{"templates":[{"k":-5}]}`, "templates[0].k -5", "[1, 4096]"},
		{`{"templates":[{"method":"kmeanz"}]}`, `templates[0].method "kmeanz"`, `"kmeans" or "sparse"`},
		{`{"templates":[{},{"grids":[2,40]}]}`, "templates[1].grids[1]", "[1, 16]"},
		{`{"templates":[{"method":"sparse","sparse":{"coder":{"solver":"lars"}}}]}`, `templates[0].sparse.coder.solver "lars"`, `"fista" or "cd"`},
		{`{"head":{"optimizer":"rmsprop"}}`, `head.optimizer "rmsprop"`, `"adam" or "sgd"`},
		{`{"head":{"val_frac":0.95}}`, "head.val_frac 0.95", "< 0.9"},
		{`{"learn_bank":{"dict":{"batch_size":-1}}}`, "learn_bank.dict.batch_size -1", "≥ 1"},
		{`{"learn_bank":{"dict":{"workers":2}}}`, "learn_bank.dict.workers 2", "FitOptions.Workers"},
		{`{"learn_bank":{"bank":{"workers":2}}}`, "learn_bank.bank.workers 2", "FitOptions.Workers"},
		{`{"templates":[{"sparse":{"checkpoint_every":5}}]}`, "templates[0].sparse.checkpoint_every 5", "run-time option"},
	}
	for _, c := range cases {
		_, err := ParseConfig(strings.NewReader(c.in))
		if err == nil {
			t.Errorf("%s: accepted", c.in)
			continue
		}
		msg := err.Error()
		if !strings.HasPrefix(msg, "pipeline: "+c.path) || !strings.Contains(msg, c.valid) {
			t.Errorf("%s: error %q; want it to start with %q and name the valid values %s", c.in, msg, "pipeline: "+c.path, c.valid)
		}
	}
}

// TestDefaultsPerField: a zero field means its default whatever else is
// set, in every part of the configuration.
func TestDefaultsPerField(t *testing.T) {
	def := DefaultConfig()
	parse := func(in string) Config {
		t.Helper()
		c, err := ParseConfig(strings.NewReader(in))
		if err != nil {
			t.Fatalf("%s: %v", in, err)
		}
		p, err := NewPlan(c)
		if err != nil {
			t.Fatalf("%s: %v", in, err)
		}
		return p.Config()
	}
	check := func(in string, got, want any) {
		t.Helper()
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%s resolves to %+v; want %+v", in, got, want)
		}
	}

	// Pool: setting sqrt keeps the default size, stride and keep.
	in := `{"pool":{"sqrt":true}}`
	want := def.Pool
	want.Sqrt = true
	check(in, parse(in).Pool, want)
	in = `{"pool":{"op":"max"}}`
	want = def.Pool
	want.Op = "max"
	check(in, parse(in).Pool, want)
	in = `{"pool":{"keep":false}}`
	if c := parse(in); c.Pool.keep() || c.Pool.Size != def.Pool.Size {
		t.Errorf("%s resolves to %+v; want keep false, size %d", in, c.Pool, def.Pool.Size)
	}

	// Head: setting epochs keeps the default MLP.
	in = `{"head":{"epochs":5}}`
	wantH := def.Head
	wantH.Epochs = 5
	check(in, parse(in).Head, wantH)
	in = `{"head":{"kind":"softmax"}}`
	wantH = def.Head
	wantH.Kind, wantH.Hidden = learn.KindSoftmax, 0
	check(in, parse(in).Head, wantH)

	// Guard and input.
	in = `{"guard":{"clip":"none"}}`
	check(in, parse(in).Guard, GuardConfig{MinStd: def.Guard.MinStd, Clip: ClipNone})
	in = `{"input":{"height":32,"deskew":"shear"}}`
	wantI := def.Input
	wantI.Height, wantI.Deskew = 32, DeskewShear
	check(in, parse(in).Input, wantI)

	// Templates, element by element.
	in = `{"templates":[{"k":32},{"patch_size":3,"map_pool":2}]}`
	d := DefaultTemplates[0]
	check(in, parse(in).Templates, []learn.TemplateConfig{
		{Method: d.Method, K: 32, PatchSize: d.PatchSize},
		{Method: d.Method, K: d.K, PatchSize: 3, MapPool: 2},
	})
	in = `{"templates":[]}`
	if c := parse(in); c.Templates == nil || len(c.Templates) != 0 {
		t.Errorf("%s resolves to templates %v; want an empty list (no layer)", in, c.Templates)
	}

	// Learned bank.
	in = `{"learn_bank":{"patches":5000}}`
	check(in, *parse(in).LearnBank, LearnBankConfig{PatchSize: 8, Patches: 5000, ZCAEps: 1e-3, Dict: learn.DictConfig{Atoms: 24}})
}

// TestConfigFromV1: a format-version-1 configuration reads as it did under
// the whole-struct rule: a head given in part keeps learn's defaults, an
// absent pool.keep is false, run-time fields are cleared.
func TestConfigFromV1(t *testing.T) {
	var c Config
	v1 := `{"pool":{"op":"avg","size":1,"stride":1},"head":{"kind":"mlp","epochs":4},
		"templates":[{"k":8,"sparse":{"atoms":8,"workers":3,"checkpoint_every":0,"coder":{"workers":2}}}],
		"learn_bank":{"dict":{"workers":2},"bank":{"workers":2}}}`
	if err := decodeStrict([]byte(v1), &c, "config"); err != nil {
		t.Fatal(err)
	}
	configFromV1(&c)
	if c.Pool.Keep == nil || *c.Pool.Keep {
		t.Errorf("pool.keep %v; want false", c.Pool.Keep)
	}
	wantH := learn.HeadConfig{Kind: learn.KindMLP, Hidden: 256, Epochs: 4, Schedule: learn.ScheduleConstant, ValFrac: 0.1}
	if c.Head != wantH {
		t.Errorf("head %+v; want %+v", c.Head, wantH)
	}
	if sp := c.Templates[0].Sparse; sp.Workers != 0 || sp.Coder.Workers != 0 || sp.Atoms != 8 {
		t.Errorf("templates[0].sparse %+v; want run-time fields cleared, atoms kept", sp)
	}
	if lb := c.LearnBank; lb.Dict.Workers != 0 || lb.Bank.Workers != 0 {
		t.Errorf("learn_bank %+v; want run-time fields cleared", lb)
	}
	if err := c.Validate(); err != nil {
		t.Errorf("translated config does not validate: %v", err)
	}
	// A zero head meant DefaultHead in version 1 too.
	var z Config
	configFromV1(&z)
	if z.Head != (learn.HeadConfig{}) {
		t.Errorf("zero head became %+v; want it left for DefaultHead", z.Head)
	}
}
