// Package locale gives the GUI toolkit a locale it can parse. With the bare
// C or POSIX locale (common on servers and in containers) the toolkit logs an
// alarming but harmless error while it initialises; importing this package
// from main first replaces such a locale with US English before that happens.
//
// The Go specification (since Go 1.21) initialises, among the packages whose
// imports are ready, the one with the smallest import path first. This
// package needs only the standard library and "boxwright/..." sorts before
// "fyne.io/...", so it runs before the toolkit reads the locale. Only main
// imports it; TestNoLocaleErrorAtStart in package main fails if a change of
// imports or paths ever breaks that order.
package locale

import (
	"os"
	"strings"
)

func init() {
	for _, k := range []string{"LC_ALL", "LC_MESSAGES", "LANG"} {
		v := os.Getenv(k)
		if v == "C" || v == "POSIX" || strings.HasPrefix(v, "C.") {
			os.Setenv(k, "en_US.UTF-8")
		}
	}
}
