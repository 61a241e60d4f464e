/** The computed columns the floor writes, with the headers phasebook gives them (templates/generic-lle.yaml). */
export const FLOOR_COLUMNS = [
  'distribution_ratio',
  'extraction_efficiency_pct',
  'pre_extraction_conc [ng/mL]',
  'spike_recovery_pct',
  'rpd_pct',
];
