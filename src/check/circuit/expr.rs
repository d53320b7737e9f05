//! The network expression: `R1 + L1 + (C1 || C2)`.
//!
//! Grammar (`||` binds tighter than `+`, as a product binds tighter than a sum):
//!
//! ```text
//! series   = parallel { "+" parallel }
//! parallel = atom { "||" atom }          ("∥" is accepted for "||")
//! atom     = NAME | "(" series ")"
//! NAME     = one or more of A-Z a-z 0-9 _ -
//! ```
//!
//! Columns in messages count characters from 1 within the expression text.

use super::ModelErrorKind;

/// Parentheses nested deeper than this are refused (the parser recurses once per level).
const MAX_DEPTH: usize = 64;

/// A parsed expression, names not yet resolved to parts.
#[derive(Debug, Clone, PartialEq)]
pub(super) enum Expr {
    /// A part name and the column where it starts.
    Name(String, usize),
    /// Two or more in series.
    Series(Vec<Expr>),
    /// Two or more in parallel.
    Parallel(Vec<Expr>),
}

#[derive(Debug, Clone, PartialEq)]
enum Token {
    Name(String),
    Plus,
    Parallel,
    Open,
    Close,
}

impl Token {
    fn text(&self) -> &str {
        match self {
            Token::Name(n) => n,
            Token::Plus => "+",
            Token::Parallel => "||",
            Token::Open => "(",
            Token::Close => ")",
        }
    }
}

/// True for characters allowed in a part name.
pub(super) fn is_name_char(c: char) -> bool {
    c.is_ascii_alphanumeric() || c == '_' || c == '-'
}

fn tokenize(text: &str) -> Result<Vec<(Token, usize)>, ModelErrorKind> {
    let chars: Vec<char> = text.chars().collect();
    let mut tokens = Vec::new();
    let mut i = 0;
    while i < chars.len() {
        let column = i + 1;
        let c = chars[i];
        match c {
            c if c.is_whitespace() => i += 1,
            '+' => {
                tokens.push((Token::Plus, column));
                i += 1;
            }
            '(' => {
                tokens.push((Token::Open, column));
                i += 1;
            }
            ')' => {
                tokens.push((Token::Close, column));
                i += 1;
            }
            '\u{2225}' => {
                tokens.push((Token::Parallel, column));
                i += 1;
            }
            '|' if chars.get(i + 1) == Some(&'|') => {
                tokens.push((Token::Parallel, column));
                i += 2;
            }
            '|' => return Err(ModelErrorKind::SinglePipe { column }),
            c if is_name_char(c) => {
                let start = i;
                while i < chars.len() && is_name_char(chars[i]) {
                    i += 1;
                }
                tokens.push((Token::Name(chars[start..i].iter().collect()), column));
            }
            c => return Err(ModelErrorKind::UnexpectedChar { found: c, column }),
        }
    }
    Ok(tokens)
}

struct Parser {
    tokens: Vec<(Token, usize)>,
    pos: usize,
}

impl Parser {
    fn peek(&self) -> Option<&(Token, usize)> {
        self.tokens.get(self.pos)
    }

    fn series(&mut self, depth: usize) -> Result<Expr, ModelErrorKind> {
        let mut items = vec![self.parallel(depth)?];
        while let Some((Token::Plus, _)) = self.peek() {
            self.pos += 1;
            items.push(self.parallel(depth)?);
        }
        Ok(group(items, false))
    }

    fn parallel(&mut self, depth: usize) -> Result<Expr, ModelErrorKind> {
        let mut items = vec![self.atom(depth)?];
        while let Some((Token::Parallel, _)) = self.peek() {
            self.pos += 1;
            items.push(self.atom(depth)?);
        }
        Ok(group(items, true))
    }

    fn atom(&mut self, depth: usize) -> Result<Expr, ModelErrorKind> {
        let Some((token, column)) = self.peek().cloned() else {
            // Only reached after an operator: an empty network is caught before parsing.
            return Err(
                match self.pos.checked_sub(1).and_then(|p| self.tokens.get(p)) {
                    Some((previous, column)) => ModelErrorKind::EndsEarly {
                        after: previous.text().to_string(),
                        column: *column,
                    },
                    None => ModelErrorKind::EmptyNetwork,
                },
            );
        };
        self.pos += 1;
        match token {
            Token::Name(name) => Ok(Expr::Name(name, column)),
            Token::Open => {
                if depth >= MAX_DEPTH {
                    return Err(ModelErrorKind::TooDeep { column });
                }
                let inner = self.series(depth + 1)?;
                match self.peek() {
                    Some((Token::Close, _)) => {
                        self.pos += 1;
                        Ok(inner)
                    }
                    None => Err(ModelErrorKind::UnclosedParen { column }),
                    Some((other, at)) => Err(ModelErrorKind::Unexpected {
                        found: other.text().to_string(),
                        column: *at,
                        hint: Some("expected '+', '||' or ')'"),
                    }),
                }
            }
            other => Err(ModelErrorKind::Unexpected {
                found: other.text().to_string(),
                column,
                hint: Some("expected a part name or '('"),
            }),
        }
    }
}

/// One item stays itself; several become a group, nested groups of the same kind flattened
/// (`(R1 + R2) + R3` is one series of three).
fn group(mut items: Vec<Expr>, parallel: bool) -> Expr {
    if items.len() == 1
        && let Some(only) = items.pop()
    {
        return only;
    }
    let mut flat = Vec::with_capacity(items.len());
    for item in items {
        match item {
            Expr::Series(inner) if !parallel => flat.extend(inner),
            Expr::Parallel(inner) if parallel => flat.extend(inner),
            item => flat.push(item),
        }
    }
    if parallel {
        Expr::Parallel(flat)
    } else {
        Expr::Series(flat)
    }
}

/// Parses a network expression into an [`Expr`] tree.
pub(super) fn parse_network(text: &str) -> Result<Expr, ModelErrorKind> {
    let tokens = tokenize(text)?;
    if tokens.is_empty() {
        return Err(ModelErrorKind::EmptyNetwork);
    }
    let mut parser = Parser { tokens, pos: 0 };
    let expr = parser.series(0)?;
    match parser.peek() {
        None => Ok(expr),
        Some((Token::Close, column)) => Err(ModelErrorKind::Unexpected {
            found: ")".to_string(),
            column: *column,
            hint: None,
        }),
        Some((token, column)) => Err(ModelErrorKind::Unexpected {
            found: token.text().to_string(),
            column: *column,
            hint: Some("expected '+' or '||' before it"),
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn name(n: &str, c: usize) -> Expr {
        Expr::Name(n.to_string(), c)
    }

    fn msg(text: &str) -> String {
        parse_network(text)
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default()
    }

    #[test]
    fn parallel_binds_tighter_than_series() {
        assert_eq!(
            parse_network("R1 + L1 || C1"),
            Ok(Expr::Series(vec![
                name("R1", 1),
                Expr::Parallel(vec![name("L1", 6), name("C1", 12)])
            ]))
        );
    }

    #[test]
    fn parentheses_group_and_nested_groups_flatten() {
        assert_eq!(
            parse_network("(R1 + L1) || C1"),
            Ok(Expr::Parallel(vec![
                Expr::Series(vec![name("R1", 2), name("L1", 7)]),
                name("C1", 14)
            ]))
        );
        assert_eq!(
            parse_network("R1 + (L1 + C1)"),
            Ok(Expr::Series(vec![
                name("R1", 1),
                name("L1", 7),
                name("C1", 12)
            ]))
        );
        assert_eq!(parse_network("((R1))"), Ok(name("R1", 3)));
        assert_eq!(
            parse_network("L1 ∥ C1"),
            Ok(Expr::Parallel(vec![name("L1", 1), name("C1", 6)]))
        );
    }

    #[test]
    fn bad_expressions_name_the_column() {
        assert_eq!(msg("R1 + L1 ) + C1"), "unexpected ')' at column 9");
        assert_eq!(msg("R1 +(L1 || C1"), "missing ')' opened at column 5");
        assert_eq!(msg(""), "empty network");
        assert_eq!(msg("   "), "empty network");
        assert_eq!(
            msg("R1 + L1 +"),
            "network ends after '+' at column 9, expected a part name or '('"
        );
        assert_eq!(
            msg("R1 + + L1"),
            "unexpected '+' at column 6, expected a part name or '('"
        );
        assert_eq!(
            msg("()"),
            "unexpected ')' at column 2, expected a part name or '('"
        );
        assert_eq!(
            msg("R1 L1"),
            "unexpected 'L1' at column 4, expected '+' or '||' before it"
        );
        assert_eq!(
            msg("(R1 L1)"),
            "unexpected 'L1' at column 5, expected '+', '||' or ')'"
        );
        assert_eq!(msg("R1 | L1"), "'|' at column 4: write '||' for parallel");
        assert_eq!(
            msg("R1 * L1"),
            "unexpected character '*' at column 4, expected a part name, '+', '||', '(' or ')'"
        );
    }

    #[test]
    fn deep_nesting_is_refused_not_overflowed() {
        let text = format!("{}R1{}", "(".repeat(10_000), ")".repeat(10_000));
        assert_eq!(
            msg(&text),
            "parentheses nested more than 64 deep at column 65"
        );
        let ok = format!("{}R1{}", "(".repeat(64), ")".repeat(64));
        assert_eq!(parse_network(&ok), Ok(name("R1", 65)));
    }
}
