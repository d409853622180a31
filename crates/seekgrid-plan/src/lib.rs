//! Search planning for seekgrid (work in progress).
