package config

import (
	"strings"
	"testing"

	"github.com/spf13/viper"
)

// The starter shows every key, so that the file `costdrift init` writes is
// where a user finds each one (its header says so).
func TestStarterShowsEveryKey(t *testing.T) {
	raw := viper.New()
	raw.SetConfigType("yaml")
	if err := raw.ReadConfig(strings.NewReader(Starter)); err != nil {
		t.Fatal(err)
	}
	for name := range defaults {
		if !raw.IsSet(name) {
			t.Errorf("the starter does not show %s", name)
		}
	}
}
