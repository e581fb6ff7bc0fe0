package api_test

import (
	"context"
	"sort"
	"strings"
	"testing"

	"github.com/getkin/kin-openapi/openapi3"

	"github.com/rotorwright/rotorwright/api"
)

func TestOpenAPIDocumentIsValid(t *testing.T) {
	if err := spec.Validate(context.Background(), openapi3.EnableExamplesValidation()); err != nil {
		t.Fatalf("openapi.yaml is not a valid OpenAPI document: %v", err)
	}
	if !strings.HasPrefix(spec.OpenAPI, "3.1") {
		t.Fatalf("openapi %s, want 3.1", spec.OpenAPI)
	}
}

// Every route of the router is documented and every documented route exists.
func TestEveryRouteDocumentedAndEveryDocumentedRouteExists(t *testing.T) {
	router := map[string]bool{}
	for _, r := range api.Routes {
		// gin's :id is OpenAPI's {id}.
		parts := strings.Split(r.Path, "/")
		for i, p := range parts {
			if strings.HasPrefix(p, ":") {
				parts[i] = "{" + p[1:] + "}"
			}
		}
		router[r.Method+" "+strings.Join(parts, "/")] = true
	}
	documented := map[string]bool{}
	for path, item := range spec.Paths.Map() {
		for method := range item.Operations() {
			documented[method+" "+path] = true
		}
	}
	var missing, extra []string
	for k := range router {
		if !documented[k] {
			missing = append(missing, k)
		}
	}
	for k := range documented {
		if !router[k] {
			extra = append(extra, k)
		}
	}
	sort.Strings(missing)
	sort.Strings(extra)
	if len(missing) > 0 || len(extra) > 0 {
		t.Fatalf("routes not documented: %v\ndocumented routes that do not exist: %v", missing, extra)
	}
}
