// Package config owns costdrift's one configuration file: the typed Config,
// its defaults, loading through viper (with COSTDRIFT_* environment
// overrides), validation with errors that name the key and the file (or the
// variable, for a value from the environment), warnings for COSTDRIFT_*
// variables that set no key, and the commented starter file that `costdrift init` writes, and the parser of
// schedule.cron that the daemon schedules with (so what validates, runs).
//
// Each scalar key is declared once, in keys (keys.go), with its default, its
// check, whether it is secret and its doc; defaults, validation, the
// starter's lines and the printable Settings are made from that table.
//
// It must not open the store, read sources or log; callers decide what to do
// with a config that failed to load.
package config
