// Package openapi embeds the API's OpenAPI 3.1 document.
package openapi

import _ "embed"

// Spec is openapi.yaml as served at /openapi.yaml.
//
//go:embed openapi.yaml
var Spec []byte
