/** References the registry's methods sentences cite (full citations; the methods text lists each once, sorted). */
export const REFERENCES = {
  lm:
    'Marquardt DW (1963) An algorithm for least-squares estimation of nonlinear parameters. ' +
    'J Soc Ind Appl Math 11:431-441.',
  hill:
    'Hill AV (1910) The possible effects of the aggregation of the molecules of haemoglobin on its dissociation ' +
    'curves. J Physiol 40:iv-vii.',
  drc: 'Ritz C, Baty F, Streibig JC, Gerhard D (2015) Dose-response analysis using R. PLoS ONE 10:e0146021.',
  bates: 'Bates DM, Watts DG (1988) Nonlinear Regression Analysis and Its Applications. Wiley.',
  arrhenius:
    'Arrhenius S (1889) Über die Reaktionsgeschwindigkeit bei der Inversion von Rohrzucker durch Säuren. ' +
    'Z Phys Chem 4:226-248.',
  // from memory (as the paired-pulse module cites it)
  bostock:
    'Bostock H, Cikurel K, Burke D (1998) Threshold tracking techniques in the study of human peripheral nerve. ' +
    'Muscle Nerve 21:137-158.',
} as const;
