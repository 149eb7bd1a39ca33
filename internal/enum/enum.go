// Package enum holds what the word-valued settings of an experiment file
// share: the keys whose value is one of a fixed set of words, such as
// permutation.blocks ("auto", "within" or "whole").
//
// Each such setting is a string type of its own package with a constant for
// every word, a String and a MarshalText method that return the word, and an
// UnmarshalText method that calls Parse with the allowed words. The empty
// word is the unset value, which SetDefaults replaces by the default (or
// which stays empty where the setting does not apply).
package enum

import (
	"encoding"
	"fmt"
	"slices"
	"strings"
)

// Error reports a word that is not one of the allowed words.
type Error struct {
	// Found is the word given.
	Found string
	// Allowed lists the words accepted, in the order the documentation
	// gives them.
	Allowed []string
}

// Error returns `want "a", "b" or "c", found "d"`.
func (e *Error) Error() string {
	return fmt.Sprintf("want %s, found %q", List(e.Allowed), e.Found)
}

// Parse sets *dst to text when text is one of allowed or empty, and returns
// an *Error listing allowed otherwise (leaving *dst alone).
func Parse[T ~string](dst *T, text []byte, allowed ...T) error {
	word := T(text)
	if word == "" || slices.Contains(allowed, word) {
		*dst = word
		return nil
	}
	names := make([]string, len(allowed))
	for i, a := range allowed {
		names[i] = string(a)
	}
	return &Error{Found: string(text), Allowed: names}
}

// Check reports whether v is a word its type accepts (or empty): it returns
// the error of decoding v with the type's UnmarshalText. Validate methods
// call it for values set from Go, which may hold any string.
func Check[T ~string, P interface {
	*T
	encoding.TextUnmarshaler
}](v T) error {
	var probe T
	return P(&probe).UnmarshalText([]byte(v))
}

// List quotes the words and joins them as `"a", "b" or "c"`.
func List(words []string) string {
	quoted := make([]string, len(words))
	for i, w := range words {
		quoted[i] = fmt.Sprintf("%q", w)
	}
	if len(quoted) < 2 {
		return strings.Join(quoted, "")
	}
	return strings.Join(quoted[:len(quoted)-1], ", ") + " or " + quoted[len(quoted)-1]
}
