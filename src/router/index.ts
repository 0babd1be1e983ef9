import { createRouter, createWebHistory, type RouteRecordRaw } from 'vue-router';
import type { Role } from '@shared/roles';
import { useSessionStore } from '@/stores/session';

declare module 'vue-router' {
  interface RouteMeta {
    title?: string;
    /** Pages open without signing in. */
    public?: boolean;
    minRole?: Role;
  }
}

const routes: RouteRecordRaw[] = [
  { path: '/sign-in', name: 'sign-in', component: () => import('@/views/SignInView.vue'), meta: { public: true, title: 'Sign in' } },
  { path: '/forgot-password', name: 'forgot-password', component: () => import('@/views/account/ForgotPasswordView.vue'), meta: { public: true, title: 'Forgot password' } },
  { path: '/reset-password/:token', name: 'reset-password', component: () => import('@/views/account/ResetPasswordView.vue'), meta: { public: true, title: 'Choose a new password' } },
  { path: '/invitation/:token', name: 'accept-invitation', component: () => import('@/views/account/AcceptInvitationView.vue'), meta: { public: true, title: 'Join your lab' } },
  {
    path: '/',
    component: () => import('@/components/AppShell.vue'),
    children: [
      { path: '', redirect: { name: 'bench' } },
      { path: 'bench', name: 'bench', component: () => import('@/views/BenchView.vue'), meta: { title: 'Bench', minRole: 'technician' } },
      { path: 'studies', name: 'studies', component: () => import('@/views/StudiesView.vue'), meta: { title: 'Studies', minRole: 'technician' } },
      { path: 'formulas', name: 'formulas', component: () => import('@/views/FormulasView.vue'), meta: { title: 'Formulas', minRole: 'technician' } },
      { path: 'formulas/ingredients', name: 'ingredients', component: () => import('@/views/formulas/IngredientsView.vue'), meta: { title: 'Ingredients', minRole: 'technician' } },
      { path: 'formulas/products/:productId', name: 'product', component: () => import('@/views/formulas/ProductView.vue'), meta: { title: 'Product', minRole: 'technician' } },
      { path: 'formulas/variants/:variantId', name: 'variant', component: () => import('@/views/formulas/VariantView.vue'), meta: { title: 'Variant', minRole: 'technician' } },
      { path: 'formulas/variants/:variantId/compare/:otherId', name: 'variant-compare', component: () => import('@/views/formulas/VariantCompareView.vue'), meta: { title: 'Compare variants', minRole: 'technician' } },
      { path: 'formulas/batches/:batchId', name: 'batch', component: () => import('@/views/formulas/BatchView.vue'), meta: { title: 'Batch', minRole: 'technician' } },
      { path: 'formulas/batches/:batchId/sheet', name: 'batch-sheet', component: () => import('@/views/formulas/BatchSheetView.vue'), meta: { title: 'Batch sheet', minRole: 'technician' } },
      { path: 'storage', name: 'storage', component: () => import('@/views/StorageView.vue'), meta: { title: 'Storage', minRole: 'technician' } },
      { path: 'storage/conditions/:conditionId', name: 'condition', component: () => import('@/views/storage/ConditionView.vue'), meta: { title: 'Storage condition', minRole: 'technician' } },
      { path: 'storage/logs/:logId', name: 'chamber-log', component: () => import('@/views/storage/ChamberLogView.vue'), meta: { title: 'Chamber log', minRole: 'technician' } },
      { path: 'reviews', name: 'reviews', component: () => import('@/views/ReviewsView.vue'), meta: { title: 'Reviews', minRole: 'owner' } },
      { path: 'reviews/:studyId', name: 'review', component: () => import('@/views/reviews/ReviewView.vue'), meta: { title: 'Review', minRole: 'owner' } },
      { path: 'studies/:studyId/report', name: 'study-report', component: () => import('@/views/reviews/ReportPrintView.vue'), meta: { title: 'Stability report', minRole: 'technician' } },
      { path: 'lab', name: 'lab', component: () => import('@/views/LabView.vue'), meta: { title: 'Lab', minRole: 'owner' } },
      { path: 'lab/audit', name: 'audit', component: () => import('@/views/lab/AuditView.vue'), meta: { title: 'Audit trail', minRole: 'owner' } },
      { path: 'lab/outbox', name: 'outbox', component: () => import('@/views/lab/OutboxView.vue'), meta: { title: 'Outbox', minRole: 'owner' } },
      { path: 'studies/new', name: 'study-new', component: () => import('@/views/studies/PlanBuilderView.vue'), meta: { title: 'Plan a study', minRole: 'formulator' } },
      { path: 'studies/:studyId', name: 'study', component: () => import('@/views/studies/StudyView.vue'), meta: { title: 'Study', minRole: 'technician' } },
      { path: 'studies/:studyId/edit', name: 'study-edit', component: () => import('@/views/studies/PlanBuilderView.vue'), meta: { title: 'Edit study plan', minRole: 'formulator' } },
      { path: 'studies/:studyId/labels', name: 'study-labels', component: () => import('@/views/studies/LabelsView.vue'), meta: { title: 'Sample labels', minRole: 'technician' } },
      { path: 'studies/:studyId/analysis', name: 'study-analysis', component: () => import('@/views/studies/AnalysisView.vue'), meta: { title: 'Analysis', minRole: 'formulator' } },
      { path: 'studies/:studyId/compare', name: 'study-compare', component: () => import('@/views/studies/CompareView.vue'), meta: { title: 'Compare variants', minRole: 'formulator' } },
      { path: 'samples/:sampleCode/checkpoints/:checkpointId', name: 'record', component: () => import('@/views/studies/RecordView.vue'), meta: { title: 'Record', minRole: 'technician' } },
      { path: 'samples/:sampleCode', name: 'sample', component: () => import('@/views/studies/SampleView.vue'), meta: { title: 'Sample', minRole: 'technician' } },
      { path: 'attributes', name: 'attributes', component: () => import('@/views/studies/AttributesView.vue'), meta: { title: 'Attributes', minRole: 'technician' } },
      { path: 'not-allowed', name: 'not-allowed', component: () => import('@/views/NotAllowedView.vue'), meta: { title: 'Not available' } },
      { path: ':rest(.*)*', name: 'not-found', component: () => import('@/views/NotFoundView.vue'), meta: { title: 'Not found' } },
    ],
  },
];

export const router = createRouter({ history: createWebHistory(), routes });

router.beforeEach(async (to) => {
  const session = useSessionStore();
  await session.load();
  if (to.meta.public) return session.user && to.name === 'sign-in' ? { name: 'bench' } : true;
  if (!session.user) return { name: 'sign-in', query: to.fullPath !== '/' ? { next: to.fullPath } : {} };
  if (to.meta.minRole && !session.can(to.meta.minRole)) {
    return { name: 'not-allowed', query: { page: String(to.meta.title ?? ''), minRole: to.meta.minRole } };
  }
  return true;
});

router.afterEach((to) => {
  document.title = to.meta.title ? `${to.meta.title} · Keepwell` : 'Keepwell';
});
