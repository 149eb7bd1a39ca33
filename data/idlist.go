package data

import (
	"bytes"
	"errors"
	"fmt"
	"strings"
)

// regionLabel is what readIDList calls the entries of a region-labels file.
const regionLabel = "region label"

// readIDList reads a file holding one name a line: a stack's participant
// order or a region-labels file. what names the entries in messages: the
// id column's name (such as "participant_id") or regionLabel; read reads
// the file (loader.read).
func readIDList(path, what string, read func(string, int64) ([]byte, error)) (names []string, lines []int, err error) {
	raw, err := read(path, maxTableBytes)
	if err != nil {
		return nil, nil, err
	}
	return parseIDList(path, raw, what)
}

// parseIDList parses raw as one name a line. Surrounding white space is
// trimmed, a leading UTF-8 byte order mark is dropped and blank lines at
// the end are ignored; a blank line before the last name is an error, as
// it would shift the order. In a participant list (what is not
// regionLabel) a first line equal to what, the id column's name, is taken
// as a header and skipped. Names must be distinct.
func parseIDList(path string, raw []byte, what string) (names []string, lines []int, err error) {
	raw = bytes.TrimPrefix(raw, []byte("\ufeff"))
	all := strings.Split(string(raw), "\n")
	for len(all) > 0 && strings.TrimSpace(all[len(all)-1]) == "" {
		all = all[:len(all)-1]
	}
	seen := make(map[string]int)
	for i, line := range all {
		name := strings.TrimSpace(line)
		if i == 0 && what != regionLabel && name == what {
			continue
		}
		if name == "" {
			return nil, nil, fileErrorf(path, i+1, 0, "line is blank; expected one %s a line", what)
		}
		if prev, ok := seen[name]; ok {
			return nil, nil, fileErrorf(path, i+1, 0, "%s %q is already on line %d", what, name, prev)
		}
		seen[name] = i + 1
		names = append(names, name)
		lines = append(lines, i+1)
	}
	if len(names) == 0 {
		return nil, nil, &FileError{Path: path, Err: fmt.Errorf("file is empty; expected one %s a line", what)}
	}
	return names, lines, nil
}

// errorList collects the problems of a cohort so that one run reports them
// all, up to a limit.
type errorList struct {
	errs  []error
	extra int
}

const maxReported = 25

func (l *errorList) add(err error) {
	if len(l.errs) < maxReported {
		l.errs = append(l.errs, err)
	} else {
		l.extra++
	}
}

func (l *errorList) err() error {
	if len(l.errs) == 0 {
		return nil
	}
	errs := l.errs
	if l.extra > 0 {
		errs = append(errs, fmt.Errorf("... and %d more problems", l.extra))
	}
	return errors.Join(errs...)
}
