//! Gathering the elements of a set sorted by input into one [`Group`] per input.

use super::survey::Group;

/// Turns elements in non-decreasing input order into groups, one per input.
#[derive(Default)]
pub struct Grouper {
    current: Option<Group>,
}

impl Grouper {
    /// Adds one element; a finished group goes to `emit`.
    #[inline]
    pub fn push(
        &mut self,
        x: u32,
        y: u32,
        g: Option<u32>,
        emit: &mut impl FnMut(Group) -> Result<(), String>,
    ) -> Result<(), String> {
        if let Some(c) = &mut self.current {
            if c.input == x {
                c.count += 1;
                if y != c.first && c.other.is_none() {
                    c.other = Some(y);
                }
                if g != c.grad && c.other_grad.is_none() {
                    c.other_grad = g;
                }
                return Ok(());
            }
            emit(*c)?;
        }
        self.current = Some(Group {
            input: x,
            count: 1,
            first: y,
            other: None,
            grad: g,
            other_grad: None,
        });
        Ok(())
    }

    /// Emits the last group.
    pub fn finish(self, emit: &mut impl FnMut(Group) -> Result<(), String>) -> Result<(), String> {
        match self.current {
            Some(c) => emit(c),
            None => Ok(()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn repeats_join_and_disagreements_are_kept() {
        let mut out = Vec::new();
        let mut emit = |g: Group| {
            out.push(g);
            Ok(())
        };
        let mut grouper = Grouper::default();
        for (x, y) in [(1, 10), (1, 10), (2, 20), (2, 21), (2, 22), (5, 50)] {
            grouper.push(x, y, None, &mut emit).unwrap();
        }
        grouper.finish(&mut emit).unwrap();
        let seen: Vec<(u32, u64, u32, Option<u32>)> = out
            .iter()
            .map(|g| (g.input, g.count, g.first, g.other))
            .collect();
        assert_eq!(
            seen,
            vec![(1, 2, 10, None), (2, 3, 20, Some(21)), (5, 1, 50, None)]
        );
    }
}
