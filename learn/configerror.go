package learn

import (
	"fmt"
	"reflect"
	"strings"
)

// ConfigError reports one bad field of a configuration struct (a
// TemplateConfig, HeadConfig, DictConfig or CoderConfig). Type and Field are
// the Go names ("TemplateConfig", "Grids[1]"); Key is the field's JSON key
// path inside the struct ("grids[1]", "sparse.coder.solver"), so that a
// caller that embeds the struct in a larger JSON document can name the whole
// path (package pipeline reports "templates[0].grids[1]"). Detail states the
// bad value and the valid ones.
type ConfigError struct {
	Type, Field, Key string
	Detail           string
}

func (e *ConfigError) Error() string {
	return "learn: " + e.Type + "." + e.Field + " " + e.Detail
}

// cfgErr builds a *ConfigError about field (a Go field name of the struct
// cfg, possibly followed by an index: "Grids[1]"); the JSON key comes from
// the field's tag.
func cfgErr(cfg any, field, format string, a ...any) *ConfigError {
	t := reflect.TypeOf(cfg)
	name, index, _ := strings.Cut(field, "[")
	key := strings.ToLower(name)
	if f, ok := t.FieldByName(name); ok {
		if k, _, _ := strings.Cut(f.Tag.Get("json"), ","); k != "" {
			key = k
		}
	}
	if index != "" {
		key += "[" + index
	}
	return &ConfigError{Type: t.Name(), Field: field, Key: key, Detail: fmt.Sprintf(format, a...)}
}

// within returns err as seen from the struct cfg that holds err's struct in
// its field named field: a DictConfig's Atoms error becomes
// TemplateConfig.Sparse.Atoms, key sparse.atoms. Other errors pass through.
func within(cfg any, field string, err error) error {
	e, ok := err.(*ConfigError)
	if !ok {
		return err
	}
	outer := cfgErr(cfg, field, "")
	return &ConfigError{Type: outer.Type, Field: field + "." + e.Field, Key: outer.Key + "." + e.Key, Detail: e.Detail}
}
