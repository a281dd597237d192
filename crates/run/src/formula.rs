//! Formulas in x, y, z (initial concentrations), parsed with the `exmex` crate: the usual
//! arithmetic, `^` for powers, and functions such as `sin`, `exp`, `sqrt`, `abs`; `PI` and `E`
//! are constants.

use exmex::{Express, FlatEx};

/// A parsed formula of position.
#[derive(Debug)]
pub struct Formula {
    expr: FlatEx<f64>,
    /// For each variable of `expr` (alphabetical), the coordinate index it reads.
    coords: Vec<usize>,
}

impl Formula {
    /// Parse `text`; the only variables allowed are `x`, `y` and `z`.
    pub fn parse(text: &str) -> Result<Formula, String> {
        let expr = FlatEx::<f64>::parse(text).map_err(|e| format!("cannot read formula: {e}"))?;
        let mut coords = Vec::new();
        for name in expr.var_names() {
            coords.push(match name.as_str() {
                "x" => 0,
                "y" => 1,
                "z" => 2,
                other => {
                    return Err(format!(
                        "unknown variable '{other}' in formula; the variables are x, y, z"
                    ))
                }
            });
        }
        Ok(Formula { expr, coords })
    }

    /// Value at point `p`.
    pub fn eval(&self, p: [f64; 3]) -> Result<f64, String> {
        let args: Vec<f64> = self.coords.iter().map(|&i| p[i]).collect();
        self.expr
            .eval(&args)
            .map_err(|e| format!("cannot evaluate formula: {e}"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_coordinates_in_any_order() {
        let f = Formula::parse("2*z + y^2 - sin(x)").unwrap();
        let v = f.eval([0.5, 3.0, -1.0]).unwrap();
        assert!((v - (-2.0 + 9.0 - 0.5f64.sin())).abs() < 1e-14);
        assert_eq!(Formula::parse("7").unwrap().eval([1.0; 3]).unwrap(), 7.0);
        assert!(Formula::parse("2*t").unwrap_err().contains("'t'"));
        assert!(Formula::parse("2*(x").is_err());
    }
}
