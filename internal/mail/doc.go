// Package mail turns open alerts into one digest message per recipient and
// delivers it: routing by the recipient's cost-centre and account patterns
// and minimum severity, the text and HTML parts of the digest with inline
// charts, the retry schedule after a failure, and the SMTP conversation
// (STARTTLS, implicit TLS, or plain text to a loopback host only) or, with
// no server configured, an .eml file per message in the outbox folder.
//
// It owns the wording and layout of the alert mail. It must not open the
// store, read the config file or decide which conditions are alerts: the
// caller passes the alerts, the chart PNGs and the settings, and records
// what happened. The SMTP password is passed in and never written to a
// message, a log line or an error.
package mail
