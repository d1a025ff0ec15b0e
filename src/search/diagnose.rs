//! Why no build meets the spec: which requirement blocks, what the stock reaches for it, and
//! the smallest relaxation that lets a build exist.
