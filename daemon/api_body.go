package daemon

import (
	"encoding/json"
	"errors"
	"net/http"
	"reflect"
	"strings"
)

// readJSON decodes the JSON request body into v, a pointer to a struct,
// refusing fields v does not have (a misspelt "reason" would otherwise be
// dropped without a word) and bodies over limit bytes. On a bad body it
// writes a 400 that names the field and the known ones, or says what
// else is wrong, and returns false. example shows a good body.
func readJSON(w http.ResponseWriter, r *http.Request, limit int64, v any, example string) bool {
	dec := json.NewDecoder(http.MaxBytesReader(w, r.Body, limit))
	dec.DisallowUnknownFields()
	err := dec.Decode(v)
	if err == nil && dec.More() {
		err = errors.New("more than one JSON value")
	}
	if err == nil {
		return true
	}
	msg := "request body: " + err.Error()
	if f, ok := strings.CutPrefix(err.Error(), "json: unknown field "); ok {
		msg = "request body: unknown field " + f + " (known: " + strings.Join(jsonFields(v), ", ") + ")"
	}
	if example != "" {
		msg += "; want JSON such as " + example
	}
	apiError(w, http.StatusBadRequest, msg)
	return false
}

// jsonFields lists the JSON names of the fields of the struct v points to.
func jsonFields(v any) []string {
	t := reflect.TypeOf(v)
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	if t.Kind() != reflect.Struct {
		return nil
	}
	var out []string
	for f := range t.Fields() {
		if !f.IsExported() {
			continue
		}
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		switch name {
		case "-":
			continue
		case "":
			name = f.Name
		}
		out = append(out, name)
	}
	return out
}
