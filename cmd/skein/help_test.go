package main

import (
	"bytes"
	"context"
	"runtime/debug"
	"strings"
	"testing"
)

// TestHelpOpensWithDescription: "skein NAME -h" of every command starts
// with a paragraph saying what the command does, before the usage line.
func TestHelpOpensWithDescription(t *testing.T) {
	for _, c := range commands() {
		t.Run(c.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			if code := run(context.Background(), []string{c.name, "-h"}, commandIO{&stdout, &stderr}); code != exitOK {
				t.Fatalf("exit %d: %s", code, stderr.String())
			}
			help := stderr.String()
			head, _, ok := strings.Cut(help, "\n\nusage: skein "+c.name)
			if !ok {
				t.Fatalf("no blank line then usage line:\n%s", help)
			}
			if strings.Contains(head, "usage:") || len(strings.Fields(head)) < 10 || !strings.HasSuffix(head, ".") {
				t.Errorf("help does not open with a paragraph of description:\n%s", help)
			}
			for _, line := range strings.Split(head, "\n") {
				if n := len([]rune(line)); n > 80 {
					t.Errorf("description line of %d runes: %q", n, line)
				}
			}
		})
	}
}

// TestVersion: "skein --version" and "skein version" print the module
// path, a version and the Go version from the build information.
func TestVersion(t *testing.T) {
	for _, args := range [][]string{{"--version"}, {"version"}} {
		var stdout, stderr bytes.Buffer
		if code := run(context.Background(), args, commandIO{&stdout, &stderr}); code != exitOK {
			t.Fatalf("%v: exit %d: %s", args, code, stderr.String())
		}
		out := stdout.String()
		if !strings.HasPrefix(out, "skein github.com/skein-neuro/skein ") || !strings.Contains(out, " go1.") {
			t.Errorf("%v printed %q", args, out)
		}
	}
}

// TestVersionOfBuild: the module version and the VCS settings the go
// command records (runtime/debug.BuildInfo) are printed as they are.
func TestVersionOfBuild(t *testing.T) {
	for _, tt := range []struct {
		info debug.BuildInfo
		want string
	}{
		{debug.BuildInfo{GoVersion: "go1.26.8", Main: debug.Module{Path: "github.com/skein-neuro/skein", Version: "v1.4.0"}},
			"skein github.com/skein-neuro/skein v1.4.0, go1.26.8"},
		{debug.BuildInfo{GoVersion: "go1.26.8", Main: debug.Module{Path: "github.com/skein-neuro/skein", Version: "(devel)"},
			Settings: []debug.BuildSetting{{Key: "vcs.revision", Value: "41e4e18c0ffee"}, {Key: "vcs.time", Value: "2026-12-02T11:36:00Z"}, {Key: "vcs.modified", Value: "true"}}},
			"skein github.com/skein-neuro/skein (devel), revision 41e4e18c0ffee+modified of 2026-12-02T11:36:00Z, go1.26.8"},
	} {
		if got := versionOf(&tt.info); got != tt.want {
			t.Errorf("versionOf = %q, want %q", got, tt.want)
		}
	}
}
