// Package openapi embeds etchlog's OpenAPI 3 document, which the server
// serves at /openapi.yaml and checks every request against.
package openapi

import _ "embed"

// Spec is the OpenAPI document (YAML).
//
//go:embed openapi.yaml
var Spec []byte
