//! Isolation by distance: great-circle distances, a simulated cline against its shuffled
//! locations, the exact Mantel enumeration for few populations, and the locations it needs.

use super::*;

/// Haversine formula (Sinnott 1984) on a sphere of radius 6371.0088 km (IUGG mean radius R₁,
/// Moritz 1980). Hand calculations: one degree along the equator is R·π/180 = 111.195080 km;
/// equator to pole is R·π/2 = 10007.557221 km; antipodes are R·π = 20015.114442 km. A general
/// pair, (52.0 N, 4.0 E)–(48.0 N, 11.0 E), is checked against the spherical law of cosines
/// (an independent textbook formula, d = R·acos(sin φ₁ sin φ₂ + cos φ₁ cos φ₂ cos Δλ)), which
/// gives 668.906 km; they agree to 1e-6 km at this distance.
#[test]
fn haversine_by_hand() {
    let at = |latitude, longitude| Coordinates { latitude, longitude };
    let r = MEAN_EARTH_RADIUS_KM;
    assert_close(haversine_km(at(0.0, 0.0), at(0.0, 1.0)), r * std::f64::consts::PI / 180.0, 1e-9);
    assert_close(haversine_km(at(0.0, 0.0), at(0.0, 1.0)), 111.195080, 1e-6);
    assert_close(haversine_km(at(0.0, 0.0), at(90.0, 0.0)), 10007.557221, 1e-6);
    assert_close(haversine_km(at(0.0, 0.0), at(0.0, 180.0)), 20015.114442, 1e-6);
    assert_eq!(haversine_km(at(12.5, -3.0), at(12.5, -3.0)), 0.0);
    let (a, b) = (at(52.0, 4.0), at(48.0, 11.0));
    let (phi_a, phi_b) = (a.latitude.to_radians(), b.latitude.to_radians());
    let cosines = r
        * (phi_a.sin() * phi_b.sin() + phi_a.cos() * phi_b.cos() * (b.longitude - a.longitude).to_radians().cos())
            .acos();
    assert_close(haversine_km(a, b), cosines, 1e-6);
    assert_close(haversine_km(a, b), 668.906, 1e-3);
    assert_close(haversine_km(b, a), haversine_km(a, b), 1e-12);
}

/// Six populations along a meridian at irregular spacing, with allele frequencies that change
/// steadily along it (a cline: p rises by 0.12 per step), so FST grows with distance; 40
/// individuals each, 12 loci.
fn cline_matrix() -> GenotypeMatrix {
    cline_of(6, 0.12)
}

/// `populations` populations P0, P1, … on a cline, p rising by `rise` per step (see
/// [`cline_matrix`]).
fn cline_of(populations: usize, rise: f64) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(13);
    let names: Vec<String> = (0..populations).map(|p| format!("P{p}")).collect();
    let individuals = 40;
    let samples: Vec<SampleMeta> = names
        .iter()
        .flat_map(|p| {
            (0..individuals).map(move |i| SampleMeta { id: format!("{p}-{i}"), population: p.to_string(), year: 2022 })
        })
        .collect();
    let mut codes = Vec::new();
    for _ in 0..12 {
        let start = 0.1 + 0.2 * rng.random::<f64>();
        for step in 0..names.len() {
            let p = start + rise * step as f64;
            for _ in 0..individuals {
                codes.extend(draw_genotype(&mut rng, &[p, 1.0 - p]));
            }
        }
    }
    let loci = (0..12)
        .map(|l| LocusMeta {
            name: format!("L{l}"),
            alleles: vec!["A".into(), "G".into()],
            chromosome: None,
            position: None,
        })
        .collect();
    GenotypeMatrix::new(samples, loci, codes).expect("simulated matrix is well formed")
}

/// Latitudes along a meridian (longitude 10° E): step distances of 10–80 km.
const CLINE_LATITUDES: [f64; 6] = [45.0, 45.1, 45.3, 45.6, 46.1, 46.8];

fn sheet(latitudes: &[f64]) -> Vec<PopulationInfo> {
    latitudes
        .iter()
        .enumerate()
        .map(|(i, &latitude)| PopulationInfo {
            population: format!("P{i}"),
            latitude: Some(latitude),
            longitude: Some(10.0),
            ..PopulationInfo::default()
        })
        .collect()
}

/// Mantel (1967) and Rousset (1997): populations on a cline, located where they were sampled,
/// show isolation by distance (positive slope of FST/(1 − FST) on ln distance, r > 0.5,
/// Mantel p < 0.05: only a few of the 6! = 720 relabellings correlate as well, and with 9999
/// permutations asked all 720 are evaluated exactly). The same genotypes with the coordinates
/// shuffled among populations show none (p > 0.1), and an `ibd-not-significant` finding says
/// the fitted line is descriptive only. Tables: one `ibd` row per pair (15) and one `ibd_test`
/// row; citations added.
#[test]
fn isolation_by_distance_on_a_cline_and_shuffled() {
    let matrix = cline_matrix();
    let structured = run_with(&matrix, json!({"permutations": 0, "bootstrap": 0}), 5, sheet(&CLINE_LATITUDES));
    let ibd = table(&structured, "ibd");
    assert_eq!(ibd.rows.len(), 15);
    let row = pair_row(ibd, "P0", "P1", None);
    assert_close(number(ibd, row, "distance_km").unwrap(), 0.1_f64.to_radians() * MEAN_EARTH_RADIUS_KM, 1e-6);
    let fst = number(ibd, row, "fst").unwrap();
    assert_close(number(ibd, row, "fst_linearised").unwrap(), fst / (1.0 - fst), 1e-12);
    let test = table(&structured, "ibd_test");
    assert_eq!(test.rows.len(), 1);
    assert_eq!((number(test, 0, "populations"), number(test, 0, "pairs")), (Some(6.0), Some(15.0)));
    assert!(number(test, 0, "slope").unwrap() > 0.0);
    assert!(number(test, 0, "r").unwrap() > 0.5, "r = {:?}", number(test, 0, "r"));
    assert!(number(test, 0, "mantel_p").unwrap() < 0.05, "p = {:?}", number(test, 0, "mantel_p"));
    assert_eq!(number(test, 0, "permutations"), Some(720.0));
    assert_eq!(text(test, 0, "mantel_method"), Some("exact"));
    assert_eq!(number(test, 0, "mantel_p_min"), Some(1.0 / 720.0));
    assert!(findings_with(&structured, "ibd-not-significant").is_empty());
    assert!(structured.citations.iter().any(|c| c.starts_with("Mantel N (1967)")));
    assert!(structured.citations.iter().any(|c| c.starts_with("Rousset F (1997)")));

    let shuffled_latitudes: Vec<f64> = [3, 0, 5, 1, 4, 2].iter().map(|&i| CLINE_LATITUDES[i]).collect();
    let shuffled = run_with(&matrix, json!({"permutations": 0, "bootstrap": 0}), 5, sheet(&shuffled_latitudes));
    let test = table(&shuffled, "ibd_test");
    assert!(number(test, 0, "mantel_p").unwrap() > 0.1, "p = {:?}", number(test, 0, "mantel_p"));
    let descriptive = findings_with(&shuffled, "ibd-not-significant");
    assert_eq!(descriptive.len(), 1);
    assert_eq!(descriptive[0].level, popgauge_abi::FindingLevel::Info);
    assert!(descriptive[0].message.contains("the fitted line is descriptive only"), "{}", descriptive[0].message);
    assert!(descriptive[0].message.contains("exact, over all 720 orders of the 6 populations"));
}

/// Exact Mantel test with few populations (Mantel 1967; complete enumeration, common practice):
/// four located populations have 4! = 24 orders, fewer than the 9999 asked, so all 24 are
/// evaluated once: `permutations` = 24, `mantel_method` = exact, p is a whole number of 24ths
/// and `mantel_p_min` = 1/24. With three populations (3! = 6 orders) no order can give
/// p ≤ 0.05 (p_min = 1/6), and the finding says so. With eight populations 8! = 40,320 orders
/// exceed the 999 asked, so 999 random orders are drawn: p_min = 1/1000.
#[test]
fn mantel_test_enumerates_few_populations_exactly() {
    let params = json!({"permutations": 0, "bootstrap": 0});
    let four = run_with(&cline_matrix(), params.clone(), 5, sheet(&CLINE_LATITUDES[..4]));
    let test = table(&four, "ibd_test");
    assert_eq!(number(test, 0, "populations"), Some(4.0));
    assert_eq!(number(test, 0, "permutations"), Some(24.0));
    assert_eq!(text(test, 0, "mantel_method"), Some("exact"));
    assert_eq!(number(test, 0, "mantel_p_min"), Some(1.0 / 24.0));
    let in_24ths = number(test, 0, "mantel_p").unwrap() * 24.0;
    assert!((in_24ths - in_24ths.round()).abs() < 1e-9 && in_24ths >= 1.0, "p·24 = {in_24ths}");

    let three = run_with(&cline_matrix(), params.clone(), 5, sheet(&CLINE_LATITUDES[..3]));
    let test = table(&three, "ibd_test");
    assert_eq!((number(test, 0, "permutations"), number(test, 0, "mantel_p_min")), (Some(6.0), Some(1.0 / 6.0)));
    let descriptive = findings_with(&three, "ibd-not-significant");
    assert_eq!(descriptive.len(), 1);
    assert!(descriptive[0].message.contains("no order of the labels can give p ≤ 0.05"), "{}", descriptive[0].message);

    let latitudes: Vec<f64> = (0..8).map(|i| 45.0 + 0.1 * f64::from(i * (i + 1) / 2)).collect();
    let eight = run_with(
        &cline_of(8, 0.08),
        json!({"permutations": 0, "bootstrap": 0, "mantel_permutations": 999}),
        5,
        sheet(&latitudes),
    );
    let test = table(&eight, "ibd_test");
    assert_eq!(number(test, 0, "populations"), Some(8.0));
    assert_eq!(number(test, 0, "permutations"), Some(999.0));
    assert_eq!(text(test, 0, "mantel_method"), Some("random"));
    assert_eq!(number(test, 0, "mantel_p_min"), Some(1.0 / 1000.0));
}

/// docs/methods.md, "Isolation by distance": fewer than three located populations → no IBD tables,
/// an `ibd-not-tested` finding; an invalid coordinate → a `bad-coordinates` warning naming the
/// population; two populations at the same place → that pair is left out with `ibd-pair-excluded`.
#[test]
fn isolation_by_distance_needs_three_valid_locations() {
    let matrix = cline_matrix();
    let params = json!({"permutations": 0, "bootstrap": 0, "mantel_permutations": 99});
    let none = run_with(&matrix, params.clone(), 5, Vec::new());
    assert!(!none.tables.contains_key("ibd") && !none.tables.contains_key("ibd_test"));
    let not_tested = findings_with(&none, "ibd-not-tested");
    assert_eq!(not_tested.len(), 1);
    assert!(not_tested[0].message.contains("no coordinates"));
    assert!(!none.citations.iter().any(|c| c.starts_with("Mantel")));
    let mut two = sheet(&CLINE_LATITUDES[..2]);
    two.push(PopulationInfo {
        population: "P2".into(),
        latitude: Some(95.0),
        longitude: Some(10.0),
        ..Default::default()
    });
    let output = run_with(&matrix, params.clone(), 5, two);
    assert!(!output.tables.contains_key("ibd"));
    let bad = findings_with(&output, "bad-coordinates");
    assert_eq!(bad.len(), 1);
    assert!(bad[0].message.contains("P2") && bad[0].message.contains("95"), "{}", bad[0].message);
    assert!(findings_with(&output, "ibd-not-tested")[0].message.contains("2 population(s)"));
    let mut same_place = sheet(&CLINE_LATITUDES);
    same_place[1].latitude = same_place[0].latitude;
    let output = run_with(&matrix, params, 5, same_place);
    assert_eq!(number(table(&output, "ibd_test"), 0, "pairs"), Some(14.0));
    let excluded = findings_with(&output, "ibd-pair-excluded");
    assert_eq!(excluded.len(), 1);
    assert!(excluded[0].message.contains("P0–P1"));
    assert_no_nan(&output);
}
