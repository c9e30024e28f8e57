package config

import (
	"fmt"
	"reflect"
	"slices"
	"strings"
)

// Changes is what differs between two checked configs: the named parts
// (links, gauges, alarms, notifiers) added, removed or changed, and every
// other key that differs, by its path (store.dir, http.listen, report, …).
type Changes struct {
	Links, Gauges, Alarms, Notify Set
	Keys                          []string // other keys that differ, sorted
}

// Set is what happened to the members of one named part, each list sorted.
type Set struct {
	Added, Removed, Changed []string
}

// Empty reports whether nothing differs.
func (s Set) Empty() bool { return len(s.Added)+len(s.Removed)+len(s.Changed) == 0 }

// Empty reports whether the two configs mean the same.
func (c Changes) Empty() bool {
	return c.Links.Empty() && c.Gauges.Empty() && c.Alarms.Empty() && c.Notify.Empty() && len(c.Keys) == 0
}

// String lists the changes one per line ("gauges added: ion"), or says
// there are none.
func (c Changes) String() string {
	var lines []string
	for _, p := range []struct {
		name string
		s    Set
	}{{"links", c.Links}, {"gauges", c.Gauges}, {"alarms", c.Alarms}, {"notify", c.Notify}} {
		for _, l := range []struct {
			how   string
			names []string
		}{{"added", p.s.Added}, {"removed", p.s.Removed}, {"changed", p.s.Changed}} {
			if len(l.names) > 0 {
				lines = append(lines, fmt.Sprintf("%s %s: %s", p.name, l.how, strings.Join(l.names, ", ")))
			}
		}
	}
	if len(c.Keys) > 0 {
		lines = append(lines, "changed: "+strings.Join(c.Keys, ", "))
	}
	if len(lines) == 0 {
		return "no changes"
	}
	return strings.Join(lines, "\n")
}

// Diff says what changed from old to new. Both must be checked configs
// (defaults filled in, values resolved), so that a key left out and the
// same key given at its default compare equal. Where a key sits in the
// file (its line) and the file's name do not count as changes.
func Diff(old, new *Config) Changes {
	c := Changes{
		Links:  diffMap(old.Links, new.Links),
		Gauges: diffMap(old.Gauges, new.Gauges),
		Alarms: diffMap(byName(old.Alarms, func(a *AlarmConfig) string { return a.Name }),
			byName(new.Alarms, func(a *AlarmConfig) string { return a.Name })),
		Notify: diffMap(byName(old.Notify, func(n *NotifyConfig) string { return n.Name }),
			byName(new.Notify, func(n *NotifyConfig) string { return n.Name })),
	}
	named := map[string]bool{"links": true, "gauges": true, "alarms": true, "notify": true}
	ov, nv := reflect.ValueOf(old).Elem(), reflect.ValueOf(new).Elem()
	for f := range ov.Type().Fields() {
		key, _, _ := strings.Cut(f.Tag.Get("yaml"), ",")
		if key == "" || key == "-" || named[key] || !f.IsExported() {
			continue
		}
		a, b := ov.FieldByIndex(f.Index), nv.FieldByIndex(f.Index)
		if f.Type.Kind() == reflect.Struct {
			c.Keys = append(c.Keys, diffStruct(key, a, b)...)
		} else if !same(a, b) {
			c.Keys = append(c.Keys, key)
		}
	}
	slices.Sort(c.Keys)
	return c
}

// diffStruct names the keys of a section (store, http, …) that differ;
// a difference in what the checker derived from them counts for the section.
func diffStruct(path string, a, b reflect.Value) []string {
	var keys []string
	for f := range a.Type().Fields() {
		key, _, _ := strings.Cut(f.Tag.Get("yaml"), ",")
		if key == "" || key == "-" || !f.IsExported() {
			continue
		}
		if !same(a.FieldByIndex(f.Index), b.FieldByIndex(f.Index)) {
			keys = append(keys, path+"."+key)
		}
	}
	if len(keys) == 0 && !same(a, b) {
		keys = append(keys, path) // only a resolved value differs (a token file's credential path)
	}
	return keys
}

func byName[T any](list []T, name func(T) string) map[string]T {
	m := make(map[string]T, len(list))
	for _, x := range list {
		m[name(x)] = x
	}
	return m
}

func diffMap[V any](old, new map[string]V) Set {
	var s Set
	for name, o := range old {
		n, ok := new[name]
		switch {
		case !ok:
			s.Removed = append(s.Removed, name)
		case !same(reflect.ValueOf(o), reflect.ValueOf(n)):
			s.Changed = append(s.Changed, name)
		}
	}
	for name := range new {
		if _, ok := old[name]; !ok {
			s.Added = append(s.Added, name)
		}
	}
	slices.Sort(s.Added)
	slices.Sort(s.Removed)
	slices.Sort(s.Changed)
	return s
}

// lineType are the value types that keep the line they were read from
// (for problems found later); the line is not part of the meaning.
var lineTypes = map[reflect.Type]bool{reflect.TypeFor[Text](): true, reflect.TypeFor[While](): true}

// same is reflect.DeepEqual, except that the Line of a Text or a While
// does not count: a key moved in the file is not a change.
func same(a, b reflect.Value) bool {
	if a.IsValid() != b.IsValid() {
		return false
	}
	if !a.IsValid() {
		return true
	}
	if a.Type() != b.Type() {
		return false
	}
	switch a.Kind() {
	case reflect.Pointer, reflect.Interface:
		if a.IsNil() || b.IsNil() {
			return a.IsNil() == b.IsNil()
		}
		return same(a.Elem(), b.Elem())
	case reflect.Struct:
		for i := range a.NumField() {
			if lineTypes[a.Type()] && a.Type().Field(i).Name == "Line" {
				continue
			}
			if !same(a.Field(i), b.Field(i)) {
				return false
			}
		}
		return true
	case reflect.Slice:
		if a.IsNil() != b.IsNil() && (a.Len() > 0 || b.Len() > 0) {
			return false
		}
		fallthrough
	case reflect.Array:
		if a.Len() != b.Len() {
			return false
		}
		for i := range a.Len() {
			if !same(a.Index(i), b.Index(i)) {
				return false
			}
		}
		return true
	case reflect.Map:
		if a.Len() != b.Len() {
			return false
		}
		for _, k := range a.MapKeys() {
			if !same(a.MapIndex(k), b.MapIndex(k)) {
				return false
			}
		}
		return true
	case reflect.Func:
		return a.IsNil() && b.IsNil()
	case reflect.Float32, reflect.Float64:
		x, y := a.Float(), b.Float()
		return x == y || x != x && y != y // NaN (unset) equals NaN
	}
	// Basic kinds, read through unexported fields too.
	switch a.Kind() {
	case reflect.Bool:
		return a.Bool() == b.Bool()
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		return a.Int() == b.Int()
	case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64, reflect.Uintptr:
		return a.Uint() == b.Uint()
	case reflect.String:
		return a.String() == b.String()
	case reflect.Complex64, reflect.Complex128:
		return a.Complex() == b.Complex()
	}
	return false // channels, unsafe pointers: never in a config
}
