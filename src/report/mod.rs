//! Headless outputs: text, markdown, JSON reports and SVG plots.
