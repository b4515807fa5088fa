//! Crossings of pieces with a family of parallel lines: every meeting of each piece with the
//! vertical lines x = c it spans, flagged by the side it counts for.
//!
//! Work is proportional to the number of crossings plus the number of pieces (each piece
//! finds its first line by bisection), never to lines times pieces. Rules, for a
//! non-vertical piece spanning `[x_min, x_max]` and the line x = c:
//! - [`HIT_A`]: `x_min < c <= x_max`, the piece crosses the line just below c (x = c - 0);
//! - [`HIT_B`]: `x_min <= c < x_max`, it crosses the line just above c (x = c + 0);
//! - a vertical piece on the line is a [`HIT_ON`] hit covering its y range.
//!
//! Each rule alone gives an even number of crossings per closed loop.

use super::piece::Piece;

/// Crossing counted by the rule `x_min < c <= x_max` (the side x < c).
pub(crate) const HIT_A: u8 = 1;
/// Crossing counted by the rule `x_min <= c < x_max` (the side x > c).
pub(crate) const HIT_B: u8 = 2;
/// A piece lying on the line, from `at` to `to`.
pub(crate) const HIT_ON: u8 = 4;

/// One meeting of a piece with line number `line`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Hit {
    /// Index into the slice of lines.
    pub line: u32,
    /// Coordinate along the line (y for a vertical line).
    pub at: f64,
    /// Equal to `at`, except for [`HIT_ON`] hits: the far end of the piece on the line.
    pub to: f64,
    /// [`HIT_A`], [`HIT_B`], both, or [`HIT_ON`].
    pub flags: u8,
}

/// Every meeting of the pieces with the vertical lines x = `lines[m]` (sorted ascending),
/// sorted by (line, at).
pub(crate) fn hits<'a>(pieces: impl Iterator<Item = &'a Piece>, lines: &[f64]) -> Vec<Hit> {
    let mut out = Vec::new();
    for p in pieces {
        let [x0, x1] = p.x_range();
        let lo = lines.partition_point(|&c| c < x0);
        for (m, &c) in lines.iter().enumerate().skip(lo) {
            if c > x1 {
                break;
            }
            if x0 == x1 {
                let [y0, y1] = p.y_range();
                out.push(Hit {
                    line: m as u32,
                    at: y0,
                    to: y1,
                    flags: HIT_ON,
                });
            } else {
                let flags = if c > x0 { HIT_A } else { 0 } | if c < x1 { HIT_B } else { 0 };
                let y = p.y_at(c);
                out.push(Hit {
                    line: m as u32,
                    at: y,
                    to: y,
                    flags,
                });
            }
        }
    }
    out.sort_unstable_by(|a, b| {
        a.line
            .cmp(&b.line)
            .then(a.at.total_cmp(&b.at))
            .then(a.to.total_cmp(&b.to))
            .then(a.flags.cmp(&b.flags))
    });
    out
}
