// Package predict holds the physical models etchlog checks weld records
// against: Jackson penetration, Lesnewich wire melting, wire-feed mass
// balance, deposit area and heat input, their closed-form inverses, a
// parameter window solver and unit conversions for the service boundary.
//
// Internal units are SI/metric and appear in every exported name: length
// mm, travel speed mm/s, wire feed speed m/min, current A, voltage V,
// temperature °C, mass kg, mass rate kg/h, energy J, heat input J/mm.
//
// Predictions are estimates for planning; they never replace qualification
// testing. The package is pure computation: no I/O, no globals that change.
package predict

import (
	"errors"
	"fmt"
	"math"
)

// ErrInvalidInput is matched (with errors.Is) by every *InputError.
var ErrInvalidInput = errors.New("predict: invalid input")

// InputError reports a rejected input quantity: Field names the quantity
// (with its unit) and Reason says what is wrong with it.
type InputError struct {
	Field  string
	Value  float64
	Reason string
}

// Error implements error.
func (e *InputError) Error() string {
	return fmt.Sprintf("predict: %s = %g: %s", e.Field, e.Value, e.Reason)
}

// Is makes errors.Is(err, ErrInvalidInput) true for every *InputError.
func (e *InputError) Is(target error) bool { return target == ErrInvalidInput }

// mustBePositive returns an *InputError unless v is finite and > 0.
func mustBePositive(field string, v float64) error {
	switch {
	case math.IsNaN(v):
		return &InputError{Field: field, Value: v, Reason: "is NaN, want a positive number"}
	case math.IsInf(v, 0):
		return &InputError{Field: field, Value: v, Reason: "is infinite, want a finite positive number"}
	case v <= 0:
		return &InputError{Field: field, Value: v, Reason: "must be greater than zero"}
	}
	return nil
}

// mustBeNonNegative returns an *InputError unless v is finite and >= 0.
func mustBeNonNegative(field string, v float64) error {
	if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
		return &InputError{Field: field, Value: v, Reason: "must be a finite number >= 0"}
	}
	return nil
}
