package enum

import (
	"errors"
	"testing"
)

type colour string

func (c *colour) UnmarshalText(text []byte) error { return Parse(c, text, "red", "green", "blue") }

func TestParseAndCheck(t *testing.T) {
	tests := []struct {
		text string
		want string // the error; "" for none
	}{
		{"red", ""},
		{"blue", ""},
		{"", ""}, // unset
		{"Red", `want "red", "green" or "blue", found "Red"`},
		{"3", `want "red", "green" or "blue", found "3"`},
	}
	for _, tt := range tests {
		c := colour("green")
		err := c.UnmarshalText([]byte(tt.text))
		switch {
		case tt.want == "" && (err != nil || c != colour(tt.text)):
			t.Errorf("%q: got %q, %v", tt.text, c, err)
		case tt.want != "" && (err == nil || err.Error() != tt.want || c != "green"):
			t.Errorf("%q: got %q, error %v, want %s and the value kept", tt.text, c, err, tt.want)
		}
		var e *Error
		if tt.want != "" && !errors.As(err, &e) {
			t.Errorf("%q: error %T, want *Error", tt.text, err)
		}
		if got := Check(colour(tt.text)); (got == nil) != (tt.want == "") {
			t.Errorf("Check(%q) = %v", tt.text, got)
		}
	}
}

func TestList(t *testing.T) {
	tests := []struct {
		words []string
		want  string
	}{
		{nil, ""},
		{[]string{"a"}, `"a"`},
		{[]string{"a", "b"}, `"a" or "b"`},
		{[]string{"a", "b", "c"}, `"a", "b" or "c"`},
	}
	for _, tt := range tests {
		if got := List(tt.words); got != tt.want {
			t.Errorf("List(%q) = %s, want %s", tt.words, got, tt.want)
		}
	}
}
