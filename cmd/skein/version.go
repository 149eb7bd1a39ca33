package main

import (
	"context"
	"flag"
	"fmt"
	"runtime"
	"runtime/debug"
)

// cmdVersion prints the version: skein version (also skein --version).
func cmdVersion(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("version", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	fs.Usage = func() {
		describe(fs.Output(), "version")
		fmt.Fprintln(fs.Output(), "usage: skein version   (or skein --version)")
	}
	if _, err := positionalArgs(fs, args, 0, "no arguments"); err != nil {
		return err
	}
	fmt.Fprintln(cio.stdout, version())
	return nil
}

// version describes the running binary from its build information: the
// main module's path and version ("(devel)" for a build from a source
// tree), the VCS revision and time with "+modified" when the tree had
// uncommitted changes, and the Go version.
func version() string {
	info, ok := debug.ReadBuildInfo()
	if !ok {
		return fmt.Sprintf("skein (no build information) %s", runtime.Version())
	}
	return versionOf(info)
}

// versionOf is version for the build information info.
func versionOf(info *debug.BuildInfo) string {
	path, v := info.Main.Path, info.Main.Version
	if path == "" {
		path = "github.com/skein-neuro/skein"
	}
	if v == "" {
		v = "(devel)"
	}
	s := fmt.Sprintf("skein %s %s", path, v)
	var rev, at, modified string
	for _, kv := range info.Settings {
		switch kv.Key {
		case "vcs.revision":
			rev = kv.Value
		case "vcs.time":
			at = kv.Value
		case "vcs.modified":
			if kv.Value == "true" {
				modified = "+modified"
			}
		}
	}
	if rev != "" {
		s += fmt.Sprintf(", revision %s%s", rev, modified)
		if at != "" {
			s += " of " + at
		}
	}
	return s + ", " + info.GoVersion
}
