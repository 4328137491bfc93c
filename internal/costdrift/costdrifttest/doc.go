// Package costdrifttest holds helpers for tests of the stages that write
// through costdrift.SourceWriter; not for production code.
//
// It owns the Recorder, a writer that keeps what a reader hands it so a test
// can compare it with the rows it expects. It must not be imported by
// anything but _test.go files, and it holds no I/O, database or fixtures.
package costdrifttest
