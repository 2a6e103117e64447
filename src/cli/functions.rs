//! `ulpgauge functions`: the catalog.

use super::Failure;
use crate::activation::{catalog, Constants, Role};
use crate::format::Binary32;
use crate::reference::ParamRounding;
use serde_json::json;

/// Arguments of `functions`.
#[derive(clap::Args, Debug)]
pub struct Args {
    /// Print JSON instead of text.
    #[arg(long)]
    json: bool,
}

fn limit_text(limit: &crate::activation::Limit) -> String {
    use crate::activation::Limit;
    match limit {
        Limit::Finite(q) => q.to_f64().to_string(),
        Limit::Zero { negative: true } => "-0".to_string(),
        Limit::Zero { negative: false } => "+0".to_string(),
        Limit::Infinite { negative: true } => "-inf".to_string(),
        Limit::Infinite { negative: false } => "+inf".to_string(),
    }
}

/// Runs `functions`.
pub fn run(args: Args) -> Result<i32, Failure> {
    let mut all = Vec::new();
    for f in catalog() {
        let constants = Constants::resolve(*f, &[], ParamRounding::Exact, &Binary32);
        let limits = |role| json!({"-inf": limit_text(&f.limit(role, false, &constants)), "+inf": limit_text(&f.limit(role, true, &constants))});
        let kinks: Vec<_> = f
            .kinks(&constants)
            .iter()
            .map(|k| json!({"at": k.at, "left": k.left.to_f64(), "right": k.right.to_f64()}))
            .collect();
        let params: Vec<_> = f
            .params()
            .iter()
            .map(|p| json!({"name": p.name, "default": p.default, "doc": p.doc}))
            .collect();
        all.push(json!({
            "name": f.name(),
            "arity": 1,
            "roles": ["forward", "derivative"],
            "definition": f.definition(),
            "derivative": f.derivative_definition(),
            "params": params,
            "facts": f.facts(),
            "kinks": kinks,
            "limits": {"forward": limits(Role::Forward), "derivative": limits(Role::Derivative)},
        }));
    }
    for g in crate::activation::gated_catalog() {
        let (da, db) = crate::activation::gated::partial_definitions(*g);
        let params: Vec<_> = g
            .act()
            .params()
            .iter()
            .map(|p| json!({"name": p.name, "default": p.default, "doc": p.doc}))
            .collect();
        all.push(json!({
            "name": g.name(),
            "arity": 2,
            "roles": crate::activation::GatedRole::ALL.map(|r| r.name()),
            "activation": g.act().name(),
            "definition": g.definition(),
            "derivative_a": da,
            "derivative_b": db,
            "params": params,
            "signature": "void NAME(const T *a, const T *b, T *y, size_t n)",
        }));
    }
    if args.json {
        sayln!("{}", serde_json::to_string_pretty(&all).expect("json"));
        return Ok(0);
    }
    for entry in &all {
        if entry["arity"] == 2 {
            sayln!(
                "{}  (two inputs a, b)",
                entry["name"].as_str().unwrap_or("")
            );
            sayln!("  y(a,b) {}", entry["definition"].as_str().unwrap_or(""));
            sayln!("  dy/da  {}", entry["derivative_a"].as_str().unwrap_or(""));
            sayln!("  dy/db  {}", entry["derivative_b"].as_str().unwrap_or(""));
            sayln!(
                "  roles  forward, derivative-a, derivative-b; kernel {}",
                entry["signature"].as_str().unwrap_or("")
            );
            continue;
        }
        sayln!("{}", entry["name"].as_str().unwrap_or(""));
        sayln!("  f(x)   {}", entry["definition"].as_str().unwrap_or(""));
        sayln!("  f'(x)  {}", entry["derivative"].as_str().unwrap_or(""));
        for p in entry["params"].as_array().into_iter().flatten() {
            sayln!(
                "  param  {} = {} ({})",
                p["name"].as_str().unwrap_or(""),
                p["default"].as_str().unwrap_or(""),
                p["doc"].as_str().unwrap_or("")
            );
        }
        let facts = &entry["facts"];
        let yes = |k: &str| {
            if facts[k].as_bool() == Some(true) {
                "yes"
            } else {
                "no"
            }
        };
        sayln!(
            "  facts  monotone {}, bounded below {}, bounded above {}, continuous {}, f(-0) = -0 {}",
            yes("monotone"), yes("bounded_below"), yes("bounded_above"), yes("continuous"), yes("keeps_negative_zero")
        );
        let lim = &entry["limits"]["forward"];
        sayln!(
            "  limits f(-inf) = {}, f(+inf) = {}",
            lim["-inf"].as_str().unwrap_or(""),
            lim["+inf"].as_str().unwrap_or("")
        );
        for k in entry["kinks"].as_array().into_iter().flatten() {
            sayln!(
                "  kink   at {}: f' left {}, right {} (derivative references use the right value)",
                k["at"],
                k["left"],
                k["right"]
            );
        }
    }
    Ok(0)
}
