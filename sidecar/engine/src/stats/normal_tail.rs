//! The complementary error function to full double precision, fast enough for the inner
//! loops of the multiple-comparison integrals and the normality checks.
//!
//! statrs 0.19.1's `erfc` was measured off by up to 1e-10 relative near `x = 0.5`, and the
//! incomplete-gamma route to the normal tail costs several times more; hence this one.

/// Power series in `s = 2 t - 1` of `y(t) = ln(erfc(x) / t) + x^2`, where `t = 2 / (2 + x)`,
/// `x >= 0`. Obtained from a Chebyshev interpolant at 60 points (terms below 1e-18 dropped)
/// rewritten in powers of `s`, all with mpmath 1.3.0 at 40 digits by
/// testdata/erfc_coefficients.py; padded with zeros to a multiple of 4.
const ERFC_POWER_SERIES: [f64; 32] = [
    -0.6717940840566923,
    0.6726432239776567,
    0.04734330684190441,
    -0.04689561023118475,
    -0.009872689366388684,
    0.00882493855745383,
    0.001758933557766382,
    -0.0023458125081223134,
    -0.0001462468629421063,
    0.0006736788796142943,
    -9.373503465815823e-05,
    -0.0001743035278020314,
    7.140103219748502e-05,
    3.1747859436922955e-05,
    -3.0187948093951486e-05,
    1.2915164139087769e-07,
    8.562779099386524e-06,
    -2.928567024161788e-06,
    -1.2725805279147717e-06,
    1.2186833373805656e-06,
    -1.6817283194044123e-07,
    -2.1376119174178424e-07,
    1.5307318366323928e-07,
    -2.6872987499866794e-08,
    -3.9024931626661816e-08,
    2.589763598195963e-08,
    4.013877704214506e-09,
    -6.421087129613183e-09,
    6.7149203936019806e-12,
    6.249457280991351e-10,
    0.0,
    0.0,
];

/// Complementary error function, relative error below 2e-15 for `-3 < x < 26.5` (checked
/// against mpmath 1.3.0 at 4000 points; for `x < 0` it is `2 - erfc(-x)`, accurate in
/// absolute terms). statrs 0.19.1's `erfc` was measured off by up to 1e-10 relative near
/// `x = 0.5`, which limited the probabilities to about 1e-12, hence this version.
pub fn erfc(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    if x < 0.0 {
        return 2.0 - erfc(-x);
    }
    if x > 27.5 {
        return 0.0;
    }
    let t = 2.0 / (2.0 + x);
    let s = 2.0 * t - 1.0;
    // Four interleaved Horner chains in s^4 (shorter dependency chains than one Horner),
    // written out so that unoptimised (debug) builds stay fast too.
    let c = &ERFC_POWER_SERIES;
    let s2 = s * s;
    let s4 = s2 * s2;
    let chain0 =
        (((((((c[28]) * s4 + c[24]) * s4 + c[20]) * s4 + c[16]) * s4 + c[12]) * s4 + c[8]) * s4 + c[4]) * s4 + c[0];
    let chain1 =
        (((((((c[29]) * s4 + c[25]) * s4 + c[21]) * s4 + c[17]) * s4 + c[13]) * s4 + c[9]) * s4 + c[5]) * s4 + c[1];
    let chain2 =
        (((((((c[30]) * s4 + c[26]) * s4 + c[22]) * s4 + c[18]) * s4 + c[14]) * s4 + c[10]) * s4 + c[6]) * s4 + c[2];
    let chain3 =
        (((((((c[31]) * s4 + c[27]) * s4 + c[23]) * s4 + c[19]) * s4 + c[15]) * s4 + c[11]) * s4 + c[7]) * s4 + c[3];
    let y = (chain0 + s * chain1) + s2 * (chain2 + s * chain3);
    if x > 4.0 {
        // Split x^2 so that the large part is squared exactly.
        let x_high = f64::from(x as f32);
        t * (-x_high * x_high).exp() * (y - (x - x_high) * (x + x_high)).exp()
    } else {
        t * (y - x * x).exp()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn erfc_matches_mpmath() {
        // mpmath 1.3.0 at 30 digits: mpmath.erfc(x).
        let cases = [
            (-1.5, 1.9661051464753108),
            (0.3, 0.6713732405408726),
            (0.7, 0.3221988061625815),
            (2.5, 0.0004069520174449589),
            (6.0, 2.1519736712498913e-17),
            (12.0, 1.3562611692059042e-64),
            (26.0, 5.663192408856143e-296),
        ];
        for (x, expected) in cases {
            let relative = (erfc(x) - expected).abs() / expected;
            assert!(relative < 4e-15, "erfc({x}): {} vs {expected}", erfc(x));
        }
    }
}
