-- The joint uncertainty of a calibration's decay constant and monitor age. Renne et al. (2010, 2011) fit
-- λε, λβ and the Fish Canyon sanidine ⁴⁰Ar*/⁴⁰K together and publish their covariance; an age depends on
-- them only through the total λ and the monitor age, so their 1σ and their correlation are what a
-- recalculation needs (stats.Calibrations gives the derivation). Calibrations from independent sources
-- have correlation 0.
ALTER TABLE calibrations ADD COLUMN lambda_monitor_correlation REAL NOT NULL DEFAULT 0
    CHECK (lambda_monitor_correlation BETWEEN -1 AND 1);

-- Renne et al. 2010: σ(λ) and the correlation reduced from the published covariance of κ, λε and λβ
-- (GCA 74:5349, abstract); that covariance cannot give the FCs age a 1σ of 0.036 Ma (it allows 0.004 to
-- 0.023 Ma over the rounding of the printed σ), so the published ± 0.036 Ma is read as 2σ.
UPDATE calibrations SET lambda_sigma_per_a = 0.00906e-10, monitor_sigma_ma = 0.018, lambda_monitor_correlation = 0.25,
    source = 'Renne et al. 2010, GCA 74:5349 (λε 0.5755e-10, λβ 4.9737e-10). σ(λ) and the correlation of λ and the FCs age (0.25) reduced from the published covariance of κ, λε and λβ; the published ± 0.036 Ma of the FCs age read as 2σ, since that covariance cannot give a 1σ so large'
WHERE code = 'renne10-fcs28305';

-- Renne et al. 2011: the revised covariance was not reachable; derived as stats.Calibrations says.
UPDATE calibrations SET lambda_sigma_per_a = 0.0132e-10, monitor_sigma_ma = 0.0183, lambda_monitor_correlation = 0.25,
    source = 'Renne et al. 2011, GCA 75:5097 (λε 0.5757e-10, λβ 4.9548e-10; values from memory). Joint uncertainty derived: σ(λ) from the σ of λε and λβ (from memory) with their covariance in Renne et al. 2010; correlation of λ and the FCs age 0.25 as for Renne et al. 2010; σ of the FCs age fitted so that the K–Pg sanidine age 66.043 ± 0.010 Ma has the published full ± 0.043 Ma (Sprain et al. 2015, GSAB 127:393; 1σ, level from memory), i.e. the published ± 0.036 Ma read as 2σ'
WHERE code = 'renne11-fcs28294';
