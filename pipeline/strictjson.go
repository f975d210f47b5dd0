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
//
// Beyond encoding/json's own rules the keys are checked on the raw text
// first (checkKeys): keys match case-sensitively ("Head" is not "head"), a
// key given twice in one object is an error, and null is accepted only
// where Go has a nil with a documented meaning (pointers, lists: the same
// as leaving the key out); anywhere else, and for the whole document, it is
// an error. A UTF-8 byte-order mark gets its own message.
func decodeStrict(data []byte, v any, what string) error {
	if bytes.HasPrefix(data, []byte("\xEF\xBB\xBF")) {
		return fmt.Errorf("pipeline: %s starts with a UTF-8 byte-order mark (EF BB BF); save the file as UTF-8 without a BOM", what)
	}
	if json.Valid(data) {
		kd := json.NewDecoder(bytes.NewReader(data))
		kd.UseNumber()
		if err := checkKeys(kd, reflect.TypeOf(v).Elem(), "", what); err != nil {
			return err
		}
	}
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

var unmarshalerType = reflect.TypeFor[json.Unmarshaler]()

// checkKeys reads one JSON value from dec (valid JSON) alongside Go type t
// and checks its object keys: each must be one of t's JSON keys exactly, no
// key may repeat within an object, and null is allowed only for pointers,
// slices, maps and interfaces. path is the value's dotted JSON path.
func checkKeys(dec *json.Decoder, t reflect.Type, path, what string) error {
	tok, err := dec.Token()
	if err != nil {
		return nil // cannot happen on valid JSON; Decode reports it
	}
	name := path
	if name == "" {
		name = "the document"
	} else {
		name = fmt.Sprintf("key %q", path)
	}
	free := t == nil || t.Kind() == reflect.Interface || reflect.PointerTo(t).Implements(unmarshalerType)
	if tok == nil {
		if free {
			return nil
		}
		switch t.Kind() {
		case reflect.Pointer, reflect.Slice, reflect.Map:
			if path != "" {
				return nil
			}
		}
		if path == "" {
			return fmt.Errorf("pipeline: %s is null; want a JSON object ({} is the default)", what)
		}
		return fmt.Errorf("pipeline: %s %s is null; leave the key out for its default", what, name)
	}
	for !free && t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	d, isDelim := tok.(json.Delim)
	if !isDelim {
		return nil
	}
	switch d {
	case '[':
		var elem reflect.Type
		if !free && (t.Kind() == reflect.Slice || t.Kind() == reflect.Array) {
			elem = t.Elem()
		}
		for i := 0; dec.More(); i++ {
			if err := checkKeys(dec, elem, fmt.Sprintf("%s[%d]", path, i), what); err != nil {
				return err
			}
		}
	case '{':
		var keys map[string]reflect.Type
		var elem reflect.Type
		isStruct := !free && t.Kind() == reflect.Struct
		if isStruct {
			keys = jsonKeys(t)
		} else if !free && t.Kind() == reflect.Map {
			elem = t.Elem()
		}
		seen := map[string]bool{}
		for dec.More() {
			kt, _ := dec.Token()
			k, _ := kt.(string)
			p := k
			if path != "" {
				p = path + "." + k
			}
			if seen[k] {
				return fmt.Errorf("pipeline: %s key %q appears twice; give each key once", what, p)
			}
			seen[k] = true
			ft := elem
			if isStruct {
				var ok bool
				if ft, ok = keys[k]; !ok {
					return unknownKeyErr(what, p, k, keys)
				}
			}
			if err := checkKeys(dec, ft, p, what); err != nil {
				return err
			}
		}
	}
	dec.Token() // the closing delimiter
	return nil
}

// unknownKeyErr names key k (at dotted path p) that is not among keys,
// pointing out a key that differs only in case.
func unknownKeyErr(what, p, k string, keys map[string]reflect.Type) error {
	valid := make([]string, 0, len(keys))
	for kk := range keys {
		valid = append(valid, kk)
		if strings.EqualFold(kk, k) {
			return fmt.Errorf("pipeline: %s key %q is unknown: keys are case-sensitive; write %q", what, p, kk)
		}
	}
	sort.Strings(valid)
	where := "at the top level"
	if i := strings.LastIndexByte(p, '.'); i >= 0 {
		where = fmt.Sprintf("in %q", p[:i])
	}
	return fmt.Errorf("pipeline: %s key %q is unknown; valid keys %s: %s (check the spelling; keys are lower case with underscores)", what, p, where, strings.Join(valid, ", "))
}
