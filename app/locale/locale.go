// Package locale gives the GUI toolkit a locale it can parse. With the bare
// C or POSIX locale (common on servers and in containers) the toolkit logs an
// alarming but harmless error while it initialises; importing this package
// from main first replaces such a locale with US English before that happens.
//
// Go initialises packages in import-path order once their own imports are
// ready, and this package needs only the standard library, so it runs
// before any fyne.io package.
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
