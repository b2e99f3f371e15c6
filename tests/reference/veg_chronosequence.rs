//! Colonisation timing on the invented sample forefield with default traits, against
//! glacier-forefield chronosequences: first pioneer plants about 7 years after deglaciation,
//! first larch, willow, green alder and dwarf shrubs on ground ice-free for about 12-15
//! years, larch-stone pine forest after more than 150 years (Burga et al. 2010, Flora
//! 205:561-576); spruce dominant after about 100-200 years (Chapin, Walker, Fastie & Sharman
//! 1994, Ecol. Monogr. 64(2):149-175). SCIENCE-CHECKS section 11 turns these into the
//! windows 5-15, 10-30 and >= 100 years. That whole succession takes centuries is a fact of
//! the trade.

use forefield_engine::coupled::CoupledSimulation;
use forefield_engine::pft::GrowthForm;
use forefield_engine::sample;
use forefield_engine::scenario::Scenario;
use forefield_engine::vegetation::VegetationParams;

fn median(values: &mut [i32]) -> i32 {
    values.sort_unstable();
    values[values.len() / 2]
}

#[test]
fn forefield_colonisation_follows_the_chronosequence() {
    let valley = sample::generate(160);
    let mut scenario = Scenario {
        n_years: 200,
        seed: 7,
        ..Scenario::default()
    };
    // The ice history these windows were measured on: the sample scenario's ELA, the ice as
    // given (no start-up relaxation) and snow kept where it falls.
    scenario.mass_balance.ela_m = Some(2900.0);
    scenario.relaxation_years = 0;
    scenario.mass_balance.snow_redistribution = false;
    let params = VegetationParams::default();
    let mut run = CoupledSimulation::new(
        &valley.bed_m,
        &valley.ice_thickness_m,
        &scenario,
        Some(&valley.vegetation),
    )
    .expect("valid run");
    let n = valley.bed_m.geometry.n_cells();
    let forms: Vec<GrowthForm> = params.types.iter().map(|t| t.growth_form).collect();
    let never = i32::MAX;
    let (mut first_plants, mut first_woody, mut first_closed) =
        (vec![never; n], vec![never; n], vec![never; n]);
    while let Some(row) = run.step_year() {
        let year = row.ice.year;
        let ice = run.ice().ice_thickness_m();
        for i in 0..n {
            if ice[i] >= 1.0 {
                (first_plants[i], first_woody[i], first_closed[i]) = (never, never, never);
                continue;
            }
            let (mut total, mut woody, mut tree) = (0.0, 0.0, 0.0);
            for (t, form) in forms.iter().enumerate() {
                let c = run.cover_of(t)[i];
                total += c;
                match form {
                    GrowthForm::Shrub => woody += c,
                    GrowthForm::Tree => {
                        woody += c;
                        tree += c
                    }
                    _ => {}
                }
            }
            // Presence at plot level: 1 % cover; closed forest: 60 % tree cover.
            if total >= 0.01 && first_plants[i] == never {
                first_plants[i] = year;
            }
            if woody >= 0.01 && first_woody[i] == never {
                first_woody[i] = year;
            }
            if tree >= 0.6 && first_closed[i] == never {
                first_closed[i] = year;
            }
        }
    }
    let exposed = run.ice().year_exposed();
    let start = scenario.start_year;
    let (mut plant_lags, mut woody_lags, mut closed_lags) = (Vec::new(), Vec::new(), Vec::new());
    let mut early = 0;
    for i in 0..n {
        let e = exposed[i];
        // Ground freed in the first 60 years, below the treeline at the end of the run.
        if e <= start || e > start + 60 {
            continue;
        }
        early += 1;
        if first_plants[i] != never {
            plant_lags.push(first_plants[i] - e);
        }
        if first_woody[i] != never {
            woody_lags.push(first_woody[i] - e);
        }
        if first_closed[i] != never {
            closed_lags.push(first_closed[i] - e);
        }
    }
    assert!(early > 100, "only {early} cells exposed early");
    let plants = median(&mut plant_lags);
    let woody = median(&mut woody_lags);
    // Measured with seed 7: median 10 and 27 years; closed forest first after 101 years.
    assert!(
        plant_lags.len() * 4 > early * 3,
        "most fresh ground gets plants"
    );
    assert!(
        (5..=15).contains(&plants),
        "first plants after {plants} years"
    );
    assert!(
        (10..=30).contains(&woody),
        "first shrubs or trees after {woody} years"
    );
    assert!(
        closed_lags.iter().all(|&lag| lag >= 100),
        "closed forest after {:?} years",
        closed_lags.iter().min()
    );
}
