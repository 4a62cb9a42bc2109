//! The Dormand–Prince 8(5,3) tableau (DOP853).
//!
//! One job: the stages, error estimate, step-size exponent and seventh-order dense output of
//! the eighth-order pair of Prince & Dormand 1981 (J. Comput. Appl. Math. 7, 67) with the
//! 5th/3rd-order error estimate and continuous extension of Hairer, Nørsett & Wanner, *Solving
//! Ordinary Differential Equations I* (2nd ed. 1993), §II.10, as in their code DOP853. Twelve
//! evaluations per step, three more for the dense output of the step that ends the
//! integration.
//!
//! ```
//! use dwarfbound::theory::ode::{solve, OdeMethod, OdeOptions};
//!
//! // y′ = y, y(0) = 1 → e at x = 1 (closed form).
//! let mut opts = OdeOptions::new(1e-12, 1e-14, 1e-3);
//! opts.method = OdeMethod::DormandPrince853;
//! let sol = solve(|_x, y: &[f64; 1]| Ok::<_, ()>([y[0]]), 0.0, [1.0], 1.0, &opts, None).unwrap();
//! assert!((sol.y[0] - std::f64::consts::E).abs() < 1e-11);
//! ```

use super::controller::approx_inv_root16;
use super::dense::DenseStep;
use super::tableau::{stage, Refusal, Tableau};
use super::OdeOptions;

/// Coefficients of DOP853, to the digits printed in Hairer's code `dop853.f` (Hairer, Nørsett &
/// Wanner, *Solving ODEs I*, §II.10). Names follow that code: cI nodes, aI_J the Runge–Kutta
/// matrix (stage I from stage J, 1-based; stage 13 is f at the new point, 14–16 serve the
/// dense output), bI the weights (row 13 of a), erI the fifth-order error weights, bhhI the
/// third-order error weights, dR_J the dense-output coefficients.
#[allow(clippy::excessive_precision)]
mod dop853_coefficients {
    pub(super) const C2: f64 = 0.526001519587677318785587544488e-01;
    pub(super) const C3: f64 = 0.789002279381515978178381316732e-01;
    pub(super) const C4: f64 = 0.118350341907227396726757197510;
    pub(super) const C5: f64 = 0.281649658092772603273242802490;
    pub(super) const C6: f64 = 0.333333333333333333333333333333;
    pub(super) const C7: f64 = 0.25;
    pub(super) const C8: f64 = 0.307692307692307692307692307692;
    pub(super) const C9: f64 = 0.651282051282051282051282051282;
    pub(super) const C10: f64 = 0.6;
    pub(super) const C11: f64 = 0.857142857142857142857142857142;
    pub(super) const C14: f64 = 0.1;
    pub(super) const C15: f64 = 0.2;
    pub(super) const C16: f64 = 0.777777777777777777777777777778;
    pub(super) const A2_1: f64 = 5.26001519587677318785587544488e-2;
    pub(super) const A3_1: f64 = 1.97250569845378994544595329183e-2;
    pub(super) const A3_2: f64 = 5.91751709536136983633785987549e-2;
    pub(super) const A4_1: f64 = 2.95875854768068491816892993775e-2;
    pub(super) const A4_3: f64 = 8.87627564304205475450678981324e-2;
    pub(super) const A5_1: f64 = 2.41365134159266685502369798665e-1;
    pub(super) const A5_3: f64 = -8.84549479328286085344864962717e-1;
    pub(super) const A5_4: f64 = 9.24834003261792003115737966543e-1;
    pub(super) const A6_1: f64 = 3.7037037037037037037037037037e-2;
    pub(super) const A6_4: f64 = 1.70828608729473871279604482173e-1;
    pub(super) const A6_5: f64 = 1.25467687566822425016691814123e-1;
    pub(super) const A7_1: f64 = 3.7109375e-2;
    pub(super) const A7_4: f64 = 1.70252211019544039314978060272e-1;
    pub(super) const A7_5: f64 = 6.02165389804559606850219397283e-2;
    pub(super) const A7_6: f64 = -1.7578125e-2;
    pub(super) const A8_1: f64 = 3.70920001185047927108779319836e-2;
    pub(super) const A8_4: f64 = 1.70383925712239993810214054705e-1;
    pub(super) const A8_5: f64 = 1.07262030446373284651809199168e-1;
    pub(super) const A8_6: f64 = -1.53194377486244017527936158236e-2;
    pub(super) const A8_7: f64 = 8.27378916381402288758473766002e-3;
    pub(super) const A9_1: f64 = 6.24110958716075717114429577812e-1;
    pub(super) const A9_4: f64 = -3.36089262944694129406857109825;
    pub(super) const A9_5: f64 = -8.68219346841726006818189891453e-1;
    pub(super) const A9_6: f64 = 2.75920996994467083049415600797e1;
    pub(super) const A9_7: f64 = 2.01540675504778934086186788979e1;
    pub(super) const A9_8: f64 = -4.34898841810699588477366255144e1;
    pub(super) const A10_1: f64 = 4.77662536438264365890433908527e-1;
    pub(super) const A10_4: f64 = -2.48811461997166764192642586468;
    pub(super) const A10_5: f64 = -5.90290826836842996371446475743e-1;
    pub(super) const A10_6: f64 = 2.12300514481811942347288949897e1;
    pub(super) const A10_7: f64 = 1.52792336328824235832596922938e1;
    pub(super) const A10_8: f64 = -3.32882109689848629194453265587e1;
    pub(super) const A10_9: f64 = -2.03312017085086261358222928593e-2;
    pub(super) const A11_1: f64 = -9.3714243008598732571704021658e-1;
    pub(super) const A11_4: f64 = 5.18637242884406370830023853209;
    pub(super) const A11_5: f64 = 1.09143734899672957818500254654;
    pub(super) const A11_6: f64 = -8.14978701074692612513997267357;
    pub(super) const A11_7: f64 = -1.85200656599969598641566180701e1;
    pub(super) const A11_8: f64 = 2.27394870993505042818970056734e1;
    pub(super) const A11_9: f64 = 2.49360555267965238987089396762;
    pub(super) const A11_10: f64 = -3.0467644718982195003823669022;
    pub(super) const A12_1: f64 = 2.27331014751653820792359768449;
    pub(super) const A12_4: f64 = -1.05344954667372501984066689879e1;
    pub(super) const A12_5: f64 = -2.00087205822486249909675718444;
    pub(super) const A12_6: f64 = -1.79589318631187989172765950534e1;
    pub(super) const A12_7: f64 = 2.79488845294199600508499808837e1;
    pub(super) const A12_8: f64 = -2.85899827713502369474065508674;
    pub(super) const A12_9: f64 = -8.87285693353062954433549289258;
    pub(super) const A12_10: f64 = 1.23605671757943030647266201528e1;
    pub(super) const A12_11: f64 = 6.43392746015763530355970484046e-1;
    pub(super) const A13_1: f64 = 5.42937341165687622380535766363e-2;
    pub(super) const A13_6: f64 = 4.45031289275240888144113950566;
    pub(super) const A13_7: f64 = 1.89151789931450038304281599044;
    pub(super) const A13_8: f64 = -5.8012039600105847814672114227;
    pub(super) const A13_9: f64 = 3.1116436695781989440891606237e-1;
    pub(super) const A13_10: f64 = -1.52160949662516078556178806805e-1;
    pub(super) const A13_11: f64 = 2.01365400804030348374776537501e-1;
    pub(super) const A13_12: f64 = 4.47106157277725905176885569043e-2;
    pub(super) const A14_1: f64 = 5.61675022830479523392909219681e-2;
    pub(super) const A14_7: f64 = 2.53500210216624811088794765333e-1;
    pub(super) const A14_8: f64 = -2.46239037470802489917441475441e-1;
    pub(super) const A14_9: f64 = -1.24191423263816360469010140626e-1;
    pub(super) const A14_10: f64 = 1.5329179827876569731206322685e-1;
    pub(super) const A14_11: f64 = 8.20105229563468988491666602057e-3;
    pub(super) const A14_12: f64 = 7.56789766054569976138603589584e-3;
    pub(super) const A14_13: f64 = -8.298e-3;
    pub(super) const A15_1: f64 = 3.18346481635021405060768473261e-2;
    pub(super) const A15_6: f64 = 2.83009096723667755288322961402e-2;
    pub(super) const A15_7: f64 = 5.35419883074385676223797384372e-2;
    pub(super) const A15_8: f64 = -5.49237485713909884646569340306e-2;
    pub(super) const A15_11: f64 = -1.08347328697249322858509316994e-4;
    pub(super) const A15_12: f64 = 3.82571090835658412954920192323e-4;
    pub(super) const A15_13: f64 = -3.40465008687404560802977114492e-4;
    pub(super) const A15_14: f64 = 1.41312443674632500278074618366e-1;
    pub(super) const A16_1: f64 = -4.28896301583791923408573538692e-1;
    pub(super) const A16_6: f64 = -4.69762141536116384314449447206;
    pub(super) const A16_7: f64 = 7.68342119606259904184240953878;
    pub(super) const A16_8: f64 = 4.06898981839711007970213554331;
    pub(super) const A16_9: f64 = 3.56727187455281109270669543021e-1;
    pub(super) const A16_13: f64 = -1.39902416515901462129418009734e-3;
    pub(super) const A16_14: f64 = 2.9475147891527723389556272149;
    pub(super) const A16_15: f64 = -9.15095847217987001081870187138;
    pub(super) const BHH1: f64 = 0.244094488188976377952755905512;
    pub(super) const BHH9: f64 = 0.733846688281611857341361741547;
    pub(super) const BHH12: f64 = 0.220588235294117647058823529412e-1;
    pub(super) const ER1: f64 = 0.1312004499419488073250102996e-1;
    pub(super) const ER6: f64 = -0.1225156446376204440720569753e+1;
    pub(super) const ER7: f64 = -0.4957589496572501915214079952;
    pub(super) const ER8: f64 = 0.1664377182454986536961530415e+1;
    pub(super) const ER9: f64 = -0.3503288487499736816886487290;
    pub(super) const ER10: f64 = 0.3341791187130174790297318841;
    pub(super) const ER11: f64 = 0.8192320648511571246570742613e-1;
    pub(super) const ER12: f64 = -0.2235530786388629525884427845e-1;
    pub(super) const D4_1: f64 = -0.84289382761090128651353491142e+1;
    pub(super) const D4_6: f64 = 0.56671495351937776962531783590;
    pub(super) const D4_7: f64 = -0.30689499459498916912797304727e+1;
    pub(super) const D4_8: f64 = 0.23846676565120698287728149680e+1;
    pub(super) const D4_9: f64 = 0.21170345824450282767155149946e+1;
    pub(super) const D4_10: f64 = -0.87139158377797299206789907490;
    pub(super) const D4_11: f64 = 0.22404374302607882758541771650e+1;
    pub(super) const D4_12: f64 = 0.63157877876946881815570249290;
    pub(super) const D4_13: f64 = -0.88990336451333310820698117400e-1;
    pub(super) const D4_14: f64 = 0.18148505520854727256656404962e+2;
    pub(super) const D4_15: f64 = -0.91946323924783554000451984436e+1;
    pub(super) const D4_16: f64 = -0.44360363875948939664310572000e+1;
    pub(super) const D5_1: f64 = 0.10427508642579134603413151009e+2;
    pub(super) const D5_6: f64 = 0.24228349177525818288430175319e+3;
    pub(super) const D5_7: f64 = 0.16520045171727028198505394887e+3;
    pub(super) const D5_8: f64 = -0.37454675472269020279518312152e+3;
    pub(super) const D5_9: f64 = -0.22113666853125306036270938578e+2;
    pub(super) const D5_10: f64 = 0.77334326684722638389603898808e+1;
    pub(super) const D5_11: f64 = -0.30674084731089398182061213626e+2;
    pub(super) const D5_12: f64 = -0.93321305264302278729567221706e+1;
    pub(super) const D5_13: f64 = 0.15697238121770843886131091075e+2;
    pub(super) const D5_14: f64 = -0.31139403219565177677282850411e+2;
    pub(super) const D5_15: f64 = -0.93529243588444783865713862664e+1;
    pub(super) const D5_16: f64 = 0.35816841486394083752465898540e+2;
    pub(super) const D6_1: f64 = 0.19985053242002433820987653617e+2;
    pub(super) const D6_6: f64 = -0.38703730874935176555105901742e+3;
    pub(super) const D6_7: f64 = -0.18917813819516756882830838328e+3;
    pub(super) const D6_8: f64 = 0.52780815920542364900561016686e+3;
    pub(super) const D6_9: f64 = -0.11573902539959630126141871134e+2;
    pub(super) const D6_10: f64 = 0.68812326946963000169666922661e+1;
    pub(super) const D6_11: f64 = -0.10006050966910838403183860980e+1;
    pub(super) const D6_12: f64 = 0.77771377980534432092869265740;
    pub(super) const D6_13: f64 = -0.27782057523535084065932004339e+1;
    pub(super) const D6_14: f64 = -0.60196695231264120758267380846e+2;
    pub(super) const D6_15: f64 = 0.84320405506677161018159903784e+2;
    pub(super) const D6_16: f64 = 0.11992291136182789328035130030e+2;
    pub(super) const D7_1: f64 = -0.25693933462703749003312586129e+2;
    pub(super) const D7_6: f64 = -0.15418974869023643374053993627e+3;
    pub(super) const D7_7: f64 = -0.23152937917604549567536039109e+3;
    pub(super) const D7_8: f64 = 0.35763911791061412378285349910e+3;
    pub(super) const D7_9: f64 = 0.93405324183624310003907691704e+2;
    pub(super) const D7_10: f64 = -0.37458323136451633156875139351e+2;
    pub(super) const D7_11: f64 = 0.10409964950896230045147246184e+3;
    pub(super) const D7_12: f64 = 0.29840293426660503123344363579e+2;
    pub(super) const D7_13: f64 = -0.43533456590011143754432175058e+2;
    pub(super) const D7_14: f64 = 0.96324553959188282948394950600e+2;
    pub(super) const D7_15: f64 = -0.39177261675615439165231486172e+2;
    pub(super) const D7_16: f64 = -0.14972683625798562581422125276e+3;
}

/// Nodes c1..c12 of DOP853 (c1 = 0; c12 = 1 is the new point).
const DOP853_C: [f64; 12] = {
    use self::dop853_coefficients as dp;
    [
        0.0,
        dp::C2,
        dp::C3,
        dp::C4,
        dp::C5,
        dp::C6,
        dp::C7,
        dp::C8,
        dp::C9,
        dp::C10,
        dp::C11,
        1.0,
    ]
};

/// Rows 1..12 of the DOP853 Runge–Kutta matrix as a dense lower triangle (zeros where the
/// method has none), for the stage loop.
const DOP853_A: [[f64; 12]; 12] = {
    use self::dop853_coefficients as dp;
    let mut a = [[0.0; 12]; 12];
    a[1][0] = dp::A2_1;
    a[2][0] = dp::A3_1;
    a[2][1] = dp::A3_2;
    a[3][0] = dp::A4_1;
    a[3][2] = dp::A4_3;
    a[4][0] = dp::A5_1;
    a[4][2] = dp::A5_3;
    a[4][3] = dp::A5_4;
    a[5][0] = dp::A6_1;
    a[5][3] = dp::A6_4;
    a[5][4] = dp::A6_5;
    a[6][0] = dp::A7_1;
    a[6][3] = dp::A7_4;
    a[6][4] = dp::A7_5;
    a[6][5] = dp::A7_6;
    a[7][0] = dp::A8_1;
    a[7][3] = dp::A8_4;
    a[7][4] = dp::A8_5;
    a[7][5] = dp::A8_6;
    a[7][6] = dp::A8_7;
    a[8][0] = dp::A9_1;
    a[8][3] = dp::A9_4;
    a[8][4] = dp::A9_5;
    a[8][5] = dp::A9_6;
    a[8][6] = dp::A9_7;
    a[8][7] = dp::A9_8;
    a[9][0] = dp::A10_1;
    a[9][3] = dp::A10_4;
    a[9][4] = dp::A10_5;
    a[9][5] = dp::A10_6;
    a[9][6] = dp::A10_7;
    a[9][7] = dp::A10_8;
    a[9][8] = dp::A10_9;
    a[10][0] = dp::A11_1;
    a[10][3] = dp::A11_4;
    a[10][4] = dp::A11_5;
    a[10][5] = dp::A11_6;
    a[10][6] = dp::A11_7;
    a[10][7] = dp::A11_8;
    a[10][8] = dp::A11_9;
    a[10][9] = dp::A11_10;
    a[11][0] = dp::A12_1;
    a[11][3] = dp::A12_4;
    a[11][4] = dp::A12_5;
    a[11][5] = dp::A12_6;
    a[11][6] = dp::A12_7;
    a[11][7] = dp::A12_8;
    a[11][8] = dp::A12_9;
    a[11][9] = dp::A12_10;
    a[11][10] = dp::A12_11;
    a
};

/// Dormand–Prince 8(5,3) (DOP853).
pub(super) struct Dop853;

/// The stages of one trial step: k1..k12 and the new state.
pub(super) struct Dop853Stages<const N: usize> {
    k: [[f64; N]; 12],
    y_new: [f64; N],
}

// Step-size control of `dop853.f` with its defaults: h_new/h in [0.333, 6] (its fac1, fac2),
// no step-size stabilisation (beta = 0), safety 0.9 — here 0.875, because err^(−1/8) is taken
// from the exponent bits (see `approx_inv_root16`), up to 6.6 % high.
const SAFE: f64 = 0.875;

impl<const N: usize> Tableau<N> for Dop853 {
    type Stages = Dop853Stages<N>;

    const SHRINK_MIN: f64 = 0.333;
    const GROW_MAX: f64 = 6.0;

    /// Stages 2–12 and the new state. One call site for the right-hand side (a loop over the
    /// tableau), so that the compiler inlines it.
    #[inline(always)]
    fn stages<E, F>(
        rhs: &mut F,
        x: f64,
        y: &[f64; N],
        k1: &[f64; N],
        h: f64,
        x_new: f64,
    ) -> Result<Self::Stages, (f64, E)>
    where
        F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
    {
        use self::dop853_coefficients as dp;
        let mut k = [[0.0; N]; 12];
        k[0] = *k1;
        for s in 1..12 {
            let row = &DOP853_A[s];
            let h_last = h * row[s - 1];
            let mut ys = [0.0; N];
            for (i, yi) in ys.iter_mut().enumerate() {
                let mut acc = 0.0;
                for j in 0..s - 1 {
                    acc += row[j] * k[j][i];
                }
                *yi = (y[i] + h * acc) + h_last * k[s - 1][i];
            }
            let xs = if s == 11 { x_new } else { x + DOP853_C[s] * h };
            k[s] = rhs(xs, &ys).map_err(|e| (xs, e))?;
        }
        let y_new = stage(
            y,
            h,
            [
                dp::A13_1,
                dp::A13_6,
                dp::A13_7,
                dp::A13_8,
                dp::A13_9,
                dp::A13_10,
                dp::A13_11,
                dp::A13_12,
            ],
            [&k[0], &k[5], &k[6], &k[7], &k[8], &k[9], &k[10], &k[11]],
        );
        Ok(Dop853Stages { k, y_new })
    }

    #[inline(always)]
    fn y_new(stages: &Self::Stages) -> &[f64; N] {
        &stages.y_new
    }

    /// The error estimate of dop853.f, squared: the fifth-order estimate, damped by the
    /// third-order one where that is small, err = |h| e5² / √(N (e5² + 0.01 e3²)) in scaled RMS
    /// norms. Squared so that no square root sits between the stages and the next step size.
    #[inline(always)]
    fn error_measure(
        st: &Self::Stages,
        y: &[f64; N],
        _k1: &[f64; N],
        h: f64,
        opts: &OdeOptions<N>,
    ) -> Option<f64> {
        use self::dop853_coefficients as dp;
        let k = &st.k;
        let y_new = &st.y_new;
        let mut err5 = 0.0;
        let mut err3 = 0.0;
        let mut finite = true;
        for i in 0..N {
            let sk = opts.atol[i] + opts.rtol * y[i].abs().max(y_new[i].abs());
            let inc = dp::A13_1 * k[0][i]
                + dp::A13_6 * k[5][i]
                + dp::A13_7 * k[6][i]
                + dp::A13_8 * k[7][i]
                + dp::A13_9 * k[8][i]
                + dp::A13_10 * k[9][i]
                + dp::A13_11 * k[10][i]
                + dp::A13_12 * k[11][i];
            let e3 = inc - dp::BHH1 * k[0][i] - dp::BHH9 * k[8][i] - dp::BHH12 * k[11][i];
            let e5 = dp::ER1 * k[0][i]
                + dp::ER6 * k[5][i]
                + dp::ER7 * k[6][i]
                + dp::ER8 * k[7][i]
                + dp::ER9 * k[8][i]
                + dp::ER10 * k[9][i]
                + dp::ER11 * k[10][i]
                + dp::ER12 * k[11][i];
            err5 += (e5 / sk) * (e5 / sk);
            err3 += (e3 / sk) * (e3 / sk);
            finite &= y_new[i].is_finite();
        }
        let mut deno = err5 + 0.01 * err3;
        if deno <= 0.0 {
            deno = 1.0;
        }
        let err_sq = (h * h) * (err5 * err5) / (N as f64 * deno);
        (finite && err_sq.is_finite()).then_some(err_sq)
    }

    /// SAFE / err^(1/8) from err² (see [`approx_inv_root16`]): dop853.f's factor before its
    /// limits.
    #[inline(always)]
    fn step_factor(err_sq: f64) -> f64 {
        SAFE * approx_inv_root16(err_sq)
    }

    /// f at the new point: one more evaluation (the next step's first stage).
    #[inline(always)]
    fn f_new<E, F>(rhs: &mut F, stages: &Self::Stages, x_new: f64) -> Result<[f64; N], Refusal<E>>
    where
        F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
    {
        match rhs(x_new, &stages.y_new) {
            Ok(v) if v.iter().all(|d| d.is_finite()) => Ok(v),
            Ok(_) => Err(Refusal::NonFinite),
            Err(error) => Err(Refusal::Rhs(x_new, error)),
        }
    }

    /// Hairer's CONTD8 preparation: the seventh-order continuous extension from the twelve
    /// stages, f at the new point and three extra stages.
    fn dense<E, F>(
        rhs: &mut F,
        x: f64,
        y: &[f64; N],
        _k1: &[f64; N],
        h: f64,
        st: &Self::Stages,
        f_new: &[f64; N],
    ) -> Result<DenseStep<N>, (f64, E)>
    where
        F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
    {
        use self::dop853_coefficients as dp;
        let k = &st.k;
        let mut f = |c: f64, yy: [f64; N]| {
            let xs = x + c * h;
            rhs(xs, &yy).map_err(|e| (xs, e))
        };
        let k14 = f(
            dp::C14,
            stage(
                y,
                h,
                [
                    dp::A14_1,
                    dp::A14_7,
                    dp::A14_8,
                    dp::A14_9,
                    dp::A14_10,
                    dp::A14_11,
                    dp::A14_12,
                    dp::A14_13,
                ],
                [&k[0], &k[6], &k[7], &k[8], &k[9], &k[10], &k[11], f_new],
            ),
        )?;
        let k15 = f(
            dp::C15,
            stage(
                y,
                h,
                [
                    dp::A15_1,
                    dp::A15_6,
                    dp::A15_7,
                    dp::A15_8,
                    dp::A15_11,
                    dp::A15_12,
                    dp::A15_13,
                    dp::A15_14,
                ],
                [&k[0], &k[5], &k[6], &k[7], &k[10], &k[11], f_new, &k14],
            ),
        )?;
        let k16 = f(
            dp::C16,
            stage(
                y,
                h,
                [
                    dp::A16_1,
                    dp::A16_6,
                    dp::A16_7,
                    dp::A16_8,
                    dp::A16_9,
                    dp::A16_13,
                    dp::A16_14,
                    dp::A16_15,
                ],
                [&k[0], &k[5], &k[6], &k[7], &k[8], f_new, &k14, &k15],
            ),
        )?;
        let ks: [&[f64; N]; 12] = [
            &k[0], &k[5], &k[6], &k[7], &k[8], &k[9], &k[10], &k[11], f_new, &k14, &k15, &k16,
        ];
        let d: [[f64; 12]; 4] = [
            [
                dp::D4_1,
                dp::D4_6,
                dp::D4_7,
                dp::D4_8,
                dp::D4_9,
                dp::D4_10,
                dp::D4_11,
                dp::D4_12,
                dp::D4_13,
                dp::D4_14,
                dp::D4_15,
                dp::D4_16,
            ],
            [
                dp::D5_1,
                dp::D5_6,
                dp::D5_7,
                dp::D5_8,
                dp::D5_9,
                dp::D5_10,
                dp::D5_11,
                dp::D5_12,
                dp::D5_13,
                dp::D5_14,
                dp::D5_15,
                dp::D5_16,
            ],
            [
                dp::D6_1,
                dp::D6_6,
                dp::D6_7,
                dp::D6_8,
                dp::D6_9,
                dp::D6_10,
                dp::D6_11,
                dp::D6_12,
                dp::D6_13,
                dp::D6_14,
                dp::D6_15,
                dp::D6_16,
            ],
            [
                dp::D7_1,
                dp::D7_6,
                dp::D7_7,
                dp::D7_8,
                dp::D7_9,
                dp::D7_10,
                dp::D7_11,
                dp::D7_12,
                dp::D7_13,
                dp::D7_14,
                dp::D7_15,
                dp::D7_16,
            ],
        ];
        let y_new = &st.y_new;
        let mut r = [[0.0; N]; 8];
        for i in 0..N {
            let ydiff = y_new[i] - y[i];
            let bspl = h * k[0][i] - ydiff;
            r[0][i] = y[i];
            r[1][i] = ydiff;
            r[2][i] = bspl;
            r[3][i] = ydiff - h * f_new[i] - bspl;
            for (row, dr) in d.iter().enumerate() {
                let mut s = 0.0;
                for (dj, kj) in dr.iter().zip(ks.iter()) {
                    s += dj * kj[i];
                }
                r[4 + row][i] = h * s;
            }
        }
        Ok(DenseStep { x_old: x, h, r })
    }
}
