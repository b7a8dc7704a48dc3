// Package schemas holds the JSON Schemas (draft 2020-12) of moltrail's file
// formats — the job, the archive record and, beside them, any other
// *.schema.json placed in this directory — embedded in the binary, and a
// helper that compiles one of them with every embedded schema available to
// its $ref.
//
// Each schema's $id is https://moltrail.invalid/schemas/FILE (the reserved
// .invalid domain: the id names the schema, it is never fetched). A $ref
// between files uses the bare file name, e.g. "job.schema.json".
package schemas

import (
	"bytes"
	"embed"
	"fmt"
	"io/fs"
	"sort"
	"strings"

	"github.com/santhosh-tekuri/jsonschema/v6"
	"golang.org/x/text/language"
	"golang.org/x/text/message"
)

//go:embed *.schema.json
var files embed.FS

// BaseURL is the prefix of every embedded schema's $id.
const BaseURL = "https://moltrail.invalid/schemas/"

// Record and Job are the raw bytes of record.schema.json and job.schema.json.
var (
	Record = mustRead("record.schema.json")
	Job    = mustRead("job.schema.json")
)

func mustRead(name string) []byte {
	b, err := files.ReadFile(name)
	if err != nil {
		panic("schemas: embedded file " + name + " missing: " + err.Error())
	}
	return b
}

// Names lists the embedded schema files.
func Names() []string {
	var out []string
	ents, _ := fs.ReadDir(files, ".")
	for _, e := range ents {
		if strings.HasSuffix(e.Name(), ".schema.json") {
			out = append(out, e.Name())
		}
	}
	sort.Strings(out)
	return out
}

// Compile compiles the embedded schema with this file name (e.g.
// "record.schema.json"); every other embedded schema is available to $ref.
func Compile(name string) (*jsonschema.Schema, error) {
	c := jsonschema.NewCompiler()
	c.DefaultDraft(jsonschema.Draft2020)
	for _, n := range Names() {
		b, err := files.ReadFile(n)
		if err != nil {
			return nil, fmt.Errorf("schema %s: %v", n, err)
		}
		doc, err := jsonschema.UnmarshalJSON(bytes.NewReader(b))
		if err != nil {
			return nil, fmt.Errorf("schema %s: not valid JSON: %v", n, err)
		}
		if err := c.AddResource(BaseURL+n, doc); err != nil {
			return nil, fmt.Errorf("schema %s: %v", n, err)
		}
	}
	s, err := c.Compile(BaseURL + name)
	if err != nil {
		return nil, fmt.Errorf("schema %s: %v", name, err)
	}
	return s, nil
}

// ValidateBytes checks one JSON document against a compiled schema and
// returns nil or an error in one sentence naming the first offending field
// as a JSON pointer.
func ValidateBytes(s *jsonschema.Schema, doc []byte) error {
	v, err := jsonschema.UnmarshalJSON(bytes.NewReader(doc))
	if err != nil {
		return fmt.Errorf("not valid JSON: %v", err)
	}
	return Explain(s.Validate(v))
}

// Explain turns a validation error into one sentence naming the deepest
// first failing location; other errors pass through unchanged.
func Explain(err error) error {
	ve, ok := err.(*jsonschema.ValidationError)
	if !ok || err == nil {
		return err
	}
	leaf := ve
	for len(leaf.Causes) > 0 {
		leaf = leaf.Causes[0]
	}
	loc := "/" + strings.Join(leaf.InstanceLocation, "/")
	msg := leaf.ErrorKind.LocalizedString(message.NewPrinter(language.English))
	return fmt.Errorf("field %s: %s", loc, msg)
}
