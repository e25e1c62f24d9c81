/**
 * The statistics core of plumbline: one published method a file (see README.md
 * beside this file for the list, the conventions for missing and zero days, and
 * the tests against outside references). Checks import from here.
 */
export { benjaminiHochberg } from './benjamini-hochberg.js';
export type { BenjaminiHochbergResult } from './benjamini-hochberg.js';
export { chiSquareHomogeneity } from './chi-square-homogeneity.js';
export { criticalValue, predictDayProportion } from './day-proportion.js';
export type { DayProportionPrediction } from './day-proportion.js';
export type { ChiSquareResult } from './chi-square-homogeneity.js';
export { esdCriticalValue, generalizedEsd } from './generalized-esd.js';
export type { Alternative, EsdStep, GeneralizedEsdOptions, GeneralizedEsdResult } from './generalized-esd.js';
export { grubbs } from './grubbs.js';
export type { GrubbsOptions, GrubbsResult } from './grubbs.js';
export { seasonalHybridEsd } from './hybrid-esd.js';
export type { SeasonalHybridEsdOptions, SeasonalHybridEsdResult } from './hybrid-esd.js';
export { loess } from './loess.js';
export type { LoessOptions } from './loess.js';
export { MAD_SCALE, mad, median, robustLocationScale } from './robust.js';
export { SEASONAL_DEFAULTS, judgeEachDay, judgeLatest } from './seasonal-detector.js';
export type { OnlineJudgement, SeasonalJudgement, SeasonalMethod, SeasonalOptions, SeasonalTransform } from './seasonal-detector.js';
export { stl, stlParameters } from './stl.js';
export type { StlOptions, StlParameters, StlResult } from './stl.js';
export { tCdf, tQuantile } from './student-t.js';
export { twoProportionZ } from './two-proportion-z.js';
export type { ZTestResult } from './two-proportion-z.js';
export { weekdayBaseline } from './weekday-baseline.js';
export type { WeekdayBaseline, WeekdayBaselineOptions } from './weekday-baseline.js';
export { wilson, zForConfidence } from './wilson.js';
export type { ProportionInterval } from './wilson.js';
