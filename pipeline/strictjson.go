package pipeline

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"reflect"
	"sort"
	"strings"
)

// decodeStrict decodes one JSON object from data into v (a pointer to a
// struct), rejecting unknown keys. When a key is unknown the error names its
// full path and lists the keys valid at that level, e.g.
//
//	pipeline: config key "head.epoch" is unknown; valid keys in "head": batch, epochs, hidden, ...
func decodeStrict(data []byte, v any, what string) error {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	if err := dec.Decode(v); err != nil {
		var se *json.SyntaxError
		var te *json.UnmarshalTypeError
		switch {
		case errors.As(err, &se):
			line, col := lineCol(data, se.Offset)
			return fmt.Errorf("pipeline: %s: JSON syntax error at line %d, column %d: %v", what, line, col, err)
		case errors.As(err, &te):
			return fmt.Errorf("pipeline: %s key %q holds %s; want %s", what, te.Field, te.Value, te.Type)
		case strings.HasPrefix(err.Error(), "json: unknown field "):
			var raw any
			if json.Unmarshal(data, &raw) == nil {
				if path, valid, ok := unknownKey(raw, reflect.TypeOf(v).Elem(), ""); ok {
					where := "at the top level"
					if i := strings.LastIndexByte(path, '.'); i >= 0 {
						where = fmt.Sprintf("in %q", path[:i])
					}
					return fmt.Errorf("pipeline: %s key %q is unknown; valid keys %s: %s (check the spelling; keys are lower case with underscores)", what, path, where, strings.Join(valid, ", "))
				}
			}
			return fmt.Errorf("pipeline: %s: %v", what, err)
		default:
			return fmt.Errorf("pipeline: %s: %v", what, err)
		}
	}
	if dec.More() {
		return fmt.Errorf("pipeline: %s: extra data after the JSON object", what)
	}
	return nil
}

func lineCol(data []byte, off int64) (line, col int) {
	line, col = 1, 1
	for i := int64(0); i < off && i < int64(len(data)); i++ {
		if data[i] == '\n' {
			line, col = line+1, 1
		} else {
			col++
		}
	}
	return line, col
}

// jsonKeys maps the JSON key of each field of struct type t (embedded
// structs flattened, as encoding/json does) to the field's type.
func jsonKeys(t reflect.Type) map[string]reflect.Type {
	keys := map[string]reflect.Type{}
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		tag := f.Tag.Get("json")
		if tag == "-" {
			continue
		}
		name, _, _ := strings.Cut(tag, ",")
		if f.Anonymous && name == "" {
			ft := f.Type
			if ft.Kind() == reflect.Pointer {
				ft = ft.Elem()
			}
			if ft.Kind() == reflect.Struct {
				for k, v := range jsonKeys(ft) {
					keys[k] = v
				}
				continue
			}
		}
		if !f.IsExported() {
			continue
		}
		if name == "" {
			name = f.Name
		}
		keys[name] = f.Type
	}
	return keys
}

// unknownKey walks the decoded JSON value raw alongside type t and returns
// the dotted path of the first key (in sorted order) that t does not know,
// with the keys valid at that level. encoding/json matches keys without
// regard to case, so this does too.
func unknownKey(raw any, t reflect.Type, prefix string) (path string, valid []string, ok bool) {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	switch t.Kind() {
	case reflect.Struct:
		obj, isObj := raw.(map[string]any)
		if !isObj {
			return "", nil, false
		}
		keys := jsonKeys(t)
		names := make([]string, 0, len(obj))
		for k := range obj {
			names = append(names, k)
		}
		sort.Strings(names)
		for _, k := range names {
			ft, found := keys[k]
			if !found {
				for kk, tt := range keys {
					if strings.EqualFold(kk, k) {
						ft, found = tt, true
						break
					}
				}
			}
			p := k
			if prefix != "" {
				p = prefix + "." + k
			}
			if !found {
				for kk := range keys {
					valid = append(valid, kk)
				}
				sort.Strings(valid)
				return p, valid, true
			}
			if path, valid, ok := unknownKey(obj[k], ft, p); ok {
				return path, valid, ok
			}
		}
	case reflect.Slice, reflect.Array:
		arr, isArr := raw.([]any)
		if !isArr {
			return "", nil, false
		}
		for i, e := range arr {
			if path, valid, ok := unknownKey(e, t.Elem(), fmt.Sprintf("%s[%d]", prefix, i)); ok {
				return path, valid, ok
			}
		}
	}
	return "", nil, false
}
