//! Model: comparison vectors in, Fellegi–Sunter parameters (λ, m, u) out.

pub mod em;
