package sqlite

import (
	"fmt"
	"os"
	"syscall"
	"time"
)

// CheckEvery is how long a clean quick check of a store stays good for the
// commands that write, as long as the store file has not changed since
// costdrift last closed it. PRAGMA quick_check reads every page: about
// 0.5 s at 10,000 cost objects and seconds at 100,000, which a nightly
// `sync` followed by `analyze` paid twice. Damage comes from outside
// SQLite's own writes (a faulty disk, a copy taken mid-write, another
// program writing the file); every such write but a silent disk fault
// changes the file's size or modification time, which is checked at every
// open, and a silent fault is caught by the next check, at least once a day.
const CheckEvery = 24 * time.Hour

// checkStamp is what costdrift knows of the store file when a writer closed
// it: its identity, size and modification time then, and when the last
// clean quick check ran. It lives beside the store, in path + "-checked",
// so that a store copied or restored elsewhere is checked again.
type checkStamp struct {
	dev, ino uint64
	size     int64
	mtimeNS  int64
	checked  int64 // Unix seconds of the last clean quick check
}

func stampPath(store string) string { return store + "-checked" }

// statStamp describes the store file as it is now, with checked unset.
func statStamp(path string) (checkStamp, bool) {
	st, err := os.Stat(path)
	if err != nil {
		return checkStamp{}, false
	}
	sys, ok := st.Sys().(*syscall.Stat_t)
	if !ok {
		return checkStamp{}, false
	}
	return checkStamp{dev: uint64(sys.Dev), ino: sys.Ino, size: st.Size(), mtimeNS: st.ModTime().UnixNano()}, true
}

// readStamp reads the stamp beside the store; false when there is none or
// it cannot be read, which makes the next writer check.
func readStamp(path string) (checkStamp, bool) {
	b, err := os.ReadFile(stampPath(path))
	if err != nil {
		return checkStamp{}, false
	}
	var s checkStamp
	if _, err := fmt.Sscanf(string(b), "dev %d ino %d size %d mtime_ns %d checked %d\n",
		&s.dev, &s.ino, &s.size, &s.mtimeNS, &s.checked); err != nil {
		return checkStamp{}, false
	}
	return s, true
}

// checkNotDue reports whether the store at path may be written without a
// quick check, and when its last clean check ran: the stamp matches the
// file as it is (no -wal left over, which a writer that did not close
// cleanly leaves), and that check is younger than CheckEvery.
func checkNotDue(path string, now time.Time) (time.Time, bool) {
	s, ok := readStamp(path)
	if !ok {
		return time.Time{}, false
	}
	if Exists(path + "-wal") {
		return time.Time{}, false
	}
	cur, ok := statStamp(path)
	if !ok || cur.dev != s.dev || cur.ino != s.ino || cur.size != s.size || cur.mtimeNS != s.mtimeNS {
		return time.Time{}, false
	}
	checked := time.Unix(s.checked, 0)
	if now.Sub(checked) >= CheckEvery || checked.After(now) {
		return time.Time{}, false
	}
	return checked, true
}

// writeStamp records the store file as a writer leaves it, closed, with
// the time of its last clean check. Without a stamp the next writer checks,
// so a failure here only costs that check; the old stamp is removed first,
// so that it never describes a file it was not written for.
func writeStamp(path string, checked time.Time) {
	os.Remove(stampPath(path))
	if checked.IsZero() || Exists(path+"-wal") {
		return
	}
	s, ok := statStamp(path)
	if !ok {
		return
	}
	s.checked = checked.Unix()
	os.WriteFile(stampPath(path), []byte(stampLine(s)), 0o600)
}

func stampLine(s checkStamp) string {
	return fmt.Sprintf("dev %d ino %d size %d mtime_ns %d checked %d\n", s.dev, s.ino, s.size, s.mtimeNS, s.checked)
}
