package experiment

import (
	"encoding"
	"errors"
	"fmt"
	"reflect"
	"slices"
	"strings"

	"github.com/pelletier/go-toml/v2/unstable"
)

// checkWords reports the first value of doc, in document order, that a
// word-valued key does not accept: a word its type does not know, or a
// value that is not a TOML string. The error names the line, column and key
// as describeTOMLError does, and wraps the type's error (an *enum.Error,
// listing the words). target is the type doc decodes into; a word-valued
// key is a field of a string type whose pointer implements
// encoding.TextUnmarshaler, such as train.Blocks. Keys target does not have,
// and documents that do not parse, are left to the decoder to report.
//
// The decoder cannot be left to do this itself: go-toml v2.4.0 to v2.4.3
// store a TOML string in a field of a string type without calling its
// UnmarshalText (go-toml issue #1109), and report the error of UnmarshalText
// on a number or boolean without its key.
func checkWords(doc []byte, target reflect.Type) error {
	var p unstable.Parser
	p.Reset(doc)
	var table []string // the key of the current [table] or [[array table]]
	for p.NextExpression() {
		e := p.Expression()
		switch e.Kind {
		case unstable.Table, unstable.ArrayTable:
			table = keyOf(e)
		case unstable.KeyValue:
			key := append(slices.Clone(table), keyOf(e)...)
			if err := checkValue(&p, fieldType(target, key), key, e, e.Value()); err != nil {
				return err
			}
		}
	}
	return nil
}

// checkValue checks the value node v of the key-value node kv, whose key
// is of Go type t (nil when the key is unknown).
func checkValue(p *unstable.Parser, t reflect.Type, key []string, kv, v *unstable.Node) error {
	if t == nil {
		return nil
	}
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	if isWord(t) {
		var err error
		switch v.Kind {
		case unstable.String:
			err = reflect.New(t).Interface().(encoding.TextUnmarshaler).UnmarshalText(v.Data)
		case unstable.Array:
			err = errors.New("want a word in quotes, found an array")
		case unstable.InlineTable:
			err = errors.New("want a word in quotes, found a table")
		default: // a number, boolean or date
			raw := p.Raw(v.Raw)
			if err = reflect.New(t).Interface().(encoding.TextUnmarshaler).UnmarshalText(raw); err == nil {
				err = fmt.Errorf("want a word in quotes, found %s", raw)
			}
		}
		if err != nil {
			at := kv.Raw
			if v.Raw.Length > 0 {
				at = v.Raw
			}
			pos := p.Shape(at).Start
			return fmt.Errorf("line %d, column %d: key %q: %w", pos.Line, pos.Column, strings.Join(key, "."), err)
		}
		return nil
	}
	switch v.Kind {
	case unstable.Array:
		if t.Kind() != reflect.Slice && t.Kind() != reflect.Array {
			return nil
		}
		for it := v.Children(); it.Next(); {
			if el := it.Node(); el.Kind != unstable.Comment {
				if err := checkValue(p, t.Elem(), key, kv, el); err != nil {
					return err
				}
			}
		}
	case unstable.InlineTable:
		for it := v.Children(); it.Next(); {
			sub := it.Node()
			if sub.Kind != unstable.KeyValue {
				continue
			}
			subKey := keyOf(sub)
			if err := checkValue(p, fieldType(t, subKey), append(slices.Clone(key), subKey...), sub, sub.Value()); err != nil {
				return err
			}
		}
	}
	return nil
}

// keyOf returns the parts of the key of a table, array table or key-value
// node.
func keyOf(n *unstable.Node) []string {
	var parts []string
	for it := n.Key(); it.Next(); {
		parts = append(parts, string(it.Node().Data))
	}
	return parts
}

// fieldType returns the Go type that the dotted key path of a table of type
// t decodes into, passing through pointers, slices (arrays of tables) and
// maps; nil when t has no such key.
func fieldType(t reflect.Type, path []string) reflect.Type {
	for _, part := range path {
		for t.Kind() == reflect.Pointer || t.Kind() == reflect.Slice || t.Kind() == reflect.Array {
			t = t.Elem()
		}
		switch t.Kind() {
		case reflect.Map:
			t = t.Elem()
		case reflect.Struct:
			f, ok := structField(t, part)
			if !ok {
				return nil
			}
			t = f
		default:
			return nil
		}
	}
	return t
}

// structField returns the type of the field of struct type t that the TOML
// key name decodes into, as go-toml matches them: by the name in the toml
// tag (or the field name), exactly or else ignoring case, with the fields
// of untagged embedded structs promoted.
func structField(t reflect.Type, name string) (reflect.Type, bool) {
	var fold reflect.Type
	for f := range t.Fields() {
		tag, _, _ := strings.Cut(f.Tag.Get("toml"), ",")
		if tag == "-" || !f.IsExported() && !f.Anonymous {
			continue
		}
		if f.Anonymous && tag == "" {
			et := f.Type
			if et.Kind() == reflect.Pointer {
				et = et.Elem()
			}
			if et.Kind() == reflect.Struct {
				if ft, ok := structField(et, name); ok {
					return ft, true
				}
				continue
			}
		}
		if tag == "" {
			tag = f.Name
		}
		if tag == name {
			return f.Type, true
		}
		if fold == nil && strings.EqualFold(tag, name) {
			fold = f.Type
		}
	}
	return fold, fold != nil
}

// isWord reports whether t is a word type: a string type whose pointer
// decodes it from text.
func isWord(t reflect.Type) bool {
	return t.Kind() == reflect.String && reflect.PointerTo(t).Implements(reflect.TypeFor[encoding.TextUnmarshaler]())
}
