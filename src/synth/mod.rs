//! Stage `synth` (being written).
