// Package costdrifttest holds helpers for tests of the stages that write
// through costdrift.SourceWriter; not for production code.
//
// It owns the Recorder, a writer that keeps what a reader hands it so a test
// can compare it with the rows it expects; Mailpit, which finds the SMTP
// server the mail tests run against; and WithFileSizeLimit (Linux), which
// makes file writes fail as on a full disk. It must not be imported by
// anything but _test.go files, and it holds no database or fixtures.
package costdrifttest
