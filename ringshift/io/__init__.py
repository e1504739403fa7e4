"""Reading and writing files: structures, frames, peak tables, JCAMP-DX, libraries."""
