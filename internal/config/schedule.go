package config

import (
	"fmt"
	"strings"
	"time"

	"github.com/robfig/cron/v3"
)

// CronParser reads schedule.cron: five fields (minute hour day-of-month
// month day-of-week), an optional leading seconds field, or a descriptor
// such as @daily or @every 30s. The daemon schedules with this same parser,
// so an expression that passes validation is one the daemon can run.
var CronParser = cron.NewParser(cron.SecondOptional | cron.Minute | cron.Hour | cron.Dom | cron.Month | cron.Dow | cron.Descriptor)

// Plan is the parsed schedule.cron, its times taken in schedule.timezone
// (an expression that names its own zone with CRON_TZ= keeps it).
func (s Schedule) Plan() (cron.Schedule, error) {
	if _, err := time.LoadLocation(s.Timezone); err != nil {
		return nil, fmt.Errorf("schedule.timezone: %q is not a known time zone (e.g. UTC, Europe/Oslo)", s.Timezone)
	}
	spec := strings.TrimSpace(s.Cron)
	if !strings.HasPrefix(spec, "CRON_TZ=") && !strings.HasPrefix(spec, "TZ=") {
		spec = "CRON_TZ=" + s.Timezone + " " + spec
	}
	plan, err := CronParser.Parse(spec)
	if err != nil {
		return nil, fmt.Errorf("schedule.cron: %q is not a cron expression: %v", s.Cron, err)
	}
	return plan, nil
}
