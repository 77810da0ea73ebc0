-- The ⁴⁰Ar/³⁹Ar calibrations the compilation knows (REFERENCES §3). Uncertainties are 1σ; NULL where the
-- source as held here does not give one (recalculation then carries no systematic term for it, and the
-- pages say so). The target is the calibration dates are recalculated to unless a view overrides it.
INSERT INTO calibrations (code, name, lambda_per_a, lambda_sigma_per_a, monitor, monitor_age_ma, monitor_sigma_ma, source, is_target) VALUES
    ('sj77-fcs2802', 'Steiger & Jäger 1977 λ, FCs 28.02 Ma', 5.543e-10, NULL, 'FCs', 28.02, NULL,
     'λ: Steiger & Jäger 1977, EPSL 36:359; FCs age: Renne et al. 1998, Chem. Geol. 145:117 (values from memory)', 0),
    ('min00-fcs28201', 'Min et al. 2000 λ, FCs 28.201 Ma', 5.463e-10, 0.0535e-10, 'FCs', 28.201, 0.023,
     'λ: Min et al. 2000, GCA 64:73; FCs age: Kuiper et al. 2008, Science 320:500 (±0.046 taken as 2σ, from memory)', 1),
    ('renne11-fcs28294', 'Renne et al. 2011, FCs 28.294 Ma', 5.5305e-10, NULL, 'FCs', 28.294, 0.036,
     'Renne et al. 2011, GCA 75:5097 (λε 0.5757e-10, λβ 4.9548e-10; values and σ level from memory)', 0),
    ('renne10-fcs28305', 'Renne et al. 2010, FCs 28.305 Ma', 5.5492e-10, NULL, 'FCs', 28.305, 0.036,
     'Renne et al. 2010, GCA 74:5349 (λε 0.5755e-10, λβ 4.9737e-10; ± taken as 1σ)', 0);
