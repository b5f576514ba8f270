//go:build !linux

package postgres

import "errors"

func imgMkfifo(string) error { return errors.New("named pipes are made here only on Linux") }
