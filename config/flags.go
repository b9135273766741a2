package config

import (
	"errors"
	"fmt"
	"slices"

	"github.com/spf13/pflag"
)

// ApplyFlags sets, for every flag the user changed on the command line,
// the setting it is bound to. bind maps a flag's long name (without
// dashes) to a setting key, e.g. {"to": "sweep.to_hz"}. Each value goes
// through [Settings.Set] with origin "--name", so the flag's text may carry
// units ("--to 20k") and later messages name the flag. Flags left at their
// default are not applied, so the settings file keeps its say.
//
// Flags are applied in order of name; every problem is reported, joined
// with [errors.Join]. A name in bind that fs does not define, or a key that
// is not a setting, is reported as an error too.
func (s *Settings) ApplyFlags(fs *pflag.FlagSet, bind map[string]string) error {
	names := make([]string, 0, len(bind))
	for name := range bind {
		names = append(names, name)
	}
	slices.Sort(names)
	var errs []error
	for _, name := range names {
		key := bind[name]
		if _, ok := lookup(key); !ok {
			errs = append(errs, fmt.Errorf("config: flag --%s is bound to %q, which is not a setting", name, key))
			continue
		}
		f := fs.Lookup(name)
		if f == nil {
			errs = append(errs, fmt.Errorf("config: flag --%s is bound to %s but not defined", name, key))
			continue
		}
		if !f.Changed {
			continue
		}
		if err := s.Set(key, f.Value.String(), "--"+name); err != nil {
			errs = append(errs, err)
		}
	}
	return errors.Join(errs...)
}
