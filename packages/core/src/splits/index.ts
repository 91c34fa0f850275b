export { foldsOf, type Fold, type FoldAssignment, type FoldSpec } from "./fold.js";
export { kFoldAssignment } from "./k-fold.js";
export { stratifiedFoldAssignment } from "./stratified-folds.js";
export { groupFoldAssignment } from "./group-folds.js";
export { groupHoldout, holdoutSplit, stratifiedHoldout, type HoldoutSplit } from "./holdout.js";
export { planFolds } from "./plan-folds.js";
