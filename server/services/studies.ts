/** Study plans and their read models (see the files in ./study/). */
export { bad, cycleHoursOf, todayIn, type Actor } from './study/common';
export { checkPlan, planCalendar, planOf, previewPlan, savePlan, type CheckedPlan } from './study/plan';
export { freshSampleCodes, materializeStudy, newSampleCode, startStudy } from './study/start';
export { amendStudy, markMissed } from './study/amend';
export { checkpointView, listStudies, studyDetail } from './study/detail';
export { bench, BENCH_CHECKPOINTS_SQL, benchDetailStatements, benchIdsOf, INITIAL_GROUP, openCheckpoints } from './study/bench';
