package cli

import (
	"bufio"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"

	"golang.org/x/term"

	"boxwright/app/backend"
)

// passwordIn is where team add reads a new member's password: the
// terminal (asked twice, not shown) or one line of standard input.
var passwordIn io.Reader = os.Stdin

func cmdTeam(args []string, stdout, stderr io.Writer) error {
	const synopsis = "team PROJECT list | add NAME --role annotator|reviewer|owner | remove NAME"
	fs := flag.NewFlagSet("team", flag.ContinueOnError)
	role := fs.String("role", "", "")
	pos, err := parse(fs, args, 2, 3, synopsis)
	if err != nil {
		return err
	}
	verb := pos[1]
	switch {
	case verb == "list" && len(pos) == 2 && *role == "":
	case verb == "add" && len(pos) == 3:
		if *role != "annotator" && *role != "reviewer" && *role != "owner" {
			return usageError(fmt.Sprintf("team add: --role %q: give annotator, reviewer or owner\nusage: boxwright %s", *role, synopsis))
		}
	case verb == "remove" && len(pos) == 3 && *role == "":
	default:
		return usageError("usage: boxwright " + synopsis)
	}
	ctx, stop := interruptible()
	defer stop()
	t, err := backend.OpenTeam(ctx, pos[0])
	if err != nil {
		return err
	}
	defer t.Close()
	var ran []string
	switch verb {
	case "list":
		ms, err := t.Team(ctx)
		if err != nil {
			return err
		}
		for _, m := range ms {
			fmt.Fprintf(stdout, "%-20s %-9s labels as %s\n", m.Role, m.Kind, m.Annotator)
		}
		return nil
	case "add":
		pw, err := readNewPassword(pos[2], stderr)
		if err != nil {
			return err
		}
		ran, err = t.AddMember(ctx, pos[2], *role, pw)
		if err != nil {
			return err
		}
	case "remove":
		ran, err = t.RemoveMember(ctx, pos[2])
		if err != nil {
			return err
		}
	}
	for _, q := range ran {
		fmt.Fprintln(stdout, q+";")
	}
	return nil
}

// readNewPassword asks for a member's password: twice on a terminal with
// nothing shown, else one line of standard input (for scripts). Empty
// keeps the password of a role that exists already.
func readNewPassword(name string, stderr io.Writer) (string, error) {
	if f, ok := passwordIn.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		fmt.Fprintf(stderr, "password for %s (empty keeps an existing role's): ", name)
		a, err := term.ReadPassword(int(f.Fd()))
		fmt.Fprintln(stderr)
		if err != nil {
			return "", err
		}
		fmt.Fprintf(stderr, "again: ")
		b, err := term.ReadPassword(int(f.Fd()))
		fmt.Fprintln(stderr)
		if err != nil {
			return "", err
		}
		if string(a) != string(b) {
			return "", fmt.Errorf("team add %s: the two passwords differ; nothing was changed", name)
		}
		return string(a), nil
	}
	line, err := bufio.NewReader(passwordIn).ReadString('\n')
	if err != nil && err != io.EOF {
		return "", fmt.Errorf("team add %s: reading the password from standard input: %w", name, err)
	}
	return strings.TrimRight(line, "\r\n"), nil
}
