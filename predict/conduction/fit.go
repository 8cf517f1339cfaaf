package conduction

import "errors"

// ErrShape is matched (errors.Is) when a model does not handle the specimen's
// shape (the FV model is one-dimensional).
var ErrShape = errors.New("conduction: shape not handled by this model")
