package main

import (
	"bytes"
	"strings"
	"testing"
)

func TestExitStatus(t *testing.T) {
	tests := []struct {
		name string
		args []string
		want int
	}{
		{"no arguments is bad usage", nil, 2},
		{"help", []string{"help"}, 0},
		{"unknown command", []string{"no-such-command"}, 2},
		{"command help", []string{"demo", "-h"}, 0},
		{"unknown flag", []string{"demo", "--no-such-flag"}, 2},
		{"version", []string{"version"}, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var out, errb bytes.Buffer
			if got := runMain(tc.args, &out, &errb); got != tc.want {
				t.Errorf("runMain(%q) = %d, want %d; stderr: %s", tc.args, got, tc.want, errb.String())
			}
		})
	}
}

func TestHelpListsCommands(t *testing.T) {
	var out bytes.Buffer
	runMain([]string{"help"}, &out, &out)
	for name := range registry {
		if !strings.Contains(out.String(), name) {
			t.Errorf("help does not list %q", name)
		}
	}
}
