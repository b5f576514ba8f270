package store

import (
	"bufio"
	"fmt"
	"os"
	"strconv"
	"strings"
	"syscall"
)

// The -shm bytes SQLite's unix VFS locks (os_unix.c, wal.c): 120 is the
// one writer's lock (WALINDEX_LOCK_OFFSET + WAL_WRITE_LOCK), 128 the lock
// every connection holds a share of while the file is open (UNIX_SHM_DMS).
const (
	walWriteLockByte = 120
	dmsLockByte      = 128
)

// shmLocks lists the processes other than this one that hold a lock of
// the given kind on byte of path's -shm file, from the kernel's table in
// /proc/locks. It never opens the -shm file: closing any descriptor of a
// file drops every POSIX lock this process holds on it, SQLite's included.
func shmLocks(path string, byteAt int64, writeOnly bool) []int {
	var st syscall.Stat_t
	if err := syscall.Stat(path+"-shm", &st); err != nil {
		return nil
	}
	dev := uint64(st.Dev)
	devID := fmt.Sprintf("%02x:%02x:%d", (dev>>8)&0xfff|(dev>>32)&^0xfff, dev&0xff|(dev>>12)&^0xff, st.Ino)
	f, err := os.Open("/proc/locks")
	if err != nil {
		return nil
	}
	defer f.Close()
	var pids []int
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		// "1: POSIX  ADVISORY  WRITE 1234 08:01:10028401 120 120"
		fs := strings.Fields(sc.Text())
		if len(fs) < 8 || fs[5] != devID || fs[1] == "->" {
			continue
		}
		if writeOnly && fs[3] != "WRITE" {
			continue
		}
		start, err1 := strconv.ParseInt(fs[6], 10, 64)
		end := int64(1) << 62
		if fs[7] != "EOF" {
			end, _ = strconv.ParseInt(fs[7], 10, 64)
		}
		pid, err2 := strconv.Atoi(fs[4])
		if err1 != nil || err2 != nil || byteAt < start || byteAt > end || pid == os.Getpid() {
			continue
		}
		pids = append(pids, pid)
	}
	return pids
}

// writerOf says which other process holds the project's write lock (0
// when none is known).
func writerOf(path string) int {
	if pids := shmLocks(path, walWriteLockByte, true); len(pids) > 0 {
		return pids[0]
	}
	return 0
}

// inUseElsewhere says whether another process has the database open.
func inUseElsewhere(path string) bool {
	return len(shmLocks(path, dmsLockByte, false)) > 0
}

// describe names a process for a person: its id and its command line.
func describe(pid int) string {
	if pid <= 0 {
		return "another connection"
	}
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/cmdline", pid))
	cmd := strings.TrimSpace(strings.ReplaceAll(string(b), "\x00", " "))
	if err != nil || cmd == "" {
		return fmt.Sprintf("process %d", pid)
	}
	if len(cmd) > 120 {
		cmd = cmd[:117] + "..."
	}
	return fmt.Sprintf("process %d (%s)", pid, cmd)
}
