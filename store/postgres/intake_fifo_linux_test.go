package postgres

import "syscall"

func imgMkfifo(path string) error { return syscall.Mkfifo(path, 0o644) }
