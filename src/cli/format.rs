//! Number formatting for CSV output.

/// Seven significant digits, fixed notation for 1e-4 <= |x| < 1e7, scientific otherwise;
/// trailing zeros trimmed.
pub fn sig7(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let a = x.abs();
    if (1e-4..1e7).contains(&a) {
        let mag = a.log10().floor() as i32;
        let decimals = (6 - mag).max(0) as usize;
        let s = format!("{x:.decimals$}");
        trim(s)
    } else {
        let s = format!("{x:.6e}");
        let (m, e) = s.split_once('e').unwrap();
        format!("{}e{}", trim(m.to_string()), e)
    }
}

fn trim(s: String) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// Parse a comma-separated list of numbers; the error names the flag.
pub fn parse_list(flag: &str, s: &str) -> Result<Vec<f64>, String> {
    let mut out = Vec::new();
    for item in s.split(',') {
        let t = item.trim();
        if t.is_empty() {
            return Err(format!("{flag} = {s}: empty item in the list; expected comma-separated numbers such as 0,0.5,1"));
        }
        let v: f64 = t
            .parse()
            .map_err(|_| format!("{flag} = {s}: `{t}` is not a number; expected comma-separated numbers such as 0,0.5,1"))?;
        if !v.is_finite() {
            return Err(format!("{flag} = {s}: `{t}` is not a finite number"));
        }
        out.push(v);
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sig7_formats() {
        assert_eq!(sig7(1.0), "1");
        assert_eq!(sig7(13.78621234), "13.78621");
        assert_eq!(sig7(0.5), "0.5");
        assert_eq!(sig7(1.2345678e12), "1.234568e12");
        assert_eq!(sig7(-2.5e-6), "-2.5e-6");
    }

    #[test]
    fn list_errors_name_the_flag() {
        assert_eq!(parse_list("--z", "0, 1,2").unwrap(), vec![0.0, 1.0, 2.0]);
        let e = parse_list("--redshifts", "0,x").unwrap_err();
        assert!(e.contains("--redshifts") && e.contains("`x`"));
        assert!(parse_list("--m", "1,,2").is_err());
    }
}
