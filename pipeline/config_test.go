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
			want.Input.Deskew = DeskewShear
		case "garments":
			want.Mirror, want.Pool.Sqrt, want.Input.Upright = true, true, UprightVertical
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
