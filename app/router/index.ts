import { createRouter, createWebHistory, type RouteRecordRaw } from 'vue-router'
import { useSessionStore } from '@/stores/session'

declare module 'vue-router' {
  interface RouteMeta {
    /** Reachable without a session. */
    public?: boolean
    /** Only for signed-out people (sign-in, sign-up): signed-in visitors go to /projects. */
    guestOnly?: boolean
    /** 'auth': the centred card; 'app': top bar and content; 'dev': developer pages; 'scene': the full-page viewer. Default: by session. */
    layout?: 'auth' | 'app' | 'dev' | 'scene'
    title?: string
  }
}

const routes: RouteRecordRaw[] = [
  { path: '/', redirect: '/projects' },
  {
    path: '/sign-in',
    name: 'sign-in',
    component: () => import('@/views/SignInView.vue'),
    meta: { public: true, guestOnly: true, layout: 'auth', title: 'Sign in' },
  },
  {
    path: '/sign-up',
    name: 'sign-up',
    component: () => import('@/views/SignUpView.vue'),
    meta: { public: true, guestOnly: true, layout: 'auth', title: 'Create an account' },
  },
  {
    path: '/confirm-email',
    name: 'confirm-email',
    component: () => import('@/views/ConfirmEmailView.vue'),
    meta: { public: true, layout: 'auth', title: 'Confirm your address' },
  },
  {
    path: '/forgot-password',
    name: 'forgot-password',
    component: () => import('@/views/ForgotPasswordView.vue'),
    meta: { public: true, layout: 'auth', title: 'Forgotten password' },
  },
  {
    path: '/reset-password',
    name: 'reset-password',
    component: () => import('@/views/ResetPasswordView.vue'),
    meta: { public: true, layout: 'auth', title: 'New password' },
  },
  {
    // The e-mailed invitation link (`#token=...`); leads through sign-up or sign-in and back, then joins.
    path: '/invites/accept',
    name: 'invite-accept',
    component: () => import('@/views/InviteAcceptView.vue'),
    meta: { public: true, layout: 'auth', title: 'Invitation' },
  },
  {
    // The e-mailed viewing pass link (`#token=...`): swaps the token for the guest session, then the project.
    path: '/passes/open',
    name: 'pass-open',
    component: () => import('@/views/PassOpenView.vue'),
    meta: { public: true, layout: 'auth', title: 'Viewing pass' },
  },
  {
    path: '/projects',
    name: 'projects',
    component: () => import('@/views/ProjectsView.vue'),
    meta: { layout: 'app', title: 'Projects' },
  },
  {
    path: '/projects/:projectId',
    name: 'project',
    component: () => import('@/views/ProjectView.vue'),
    props: true,
    meta: { layout: 'app', title: 'Project' },
  },
  {
    path: '/projects/:projectId/scenes/:sceneId',
    name: 'scene',
    component: () => import('@/views/SceneView.vue'),
    props: true,
    meta: { layout: 'scene', title: 'Scene' },
  },
  {
    path: '/projects/:projectId/scenes/:sceneId/sheet',
    name: 'scene-sheet',
    component: () => import('@/views/SceneSheetView.vue'),
    props: (route) => ({ projectId: route.params.projectId, sceneId: route.params.sceneId, checkpointId: typeof route.query.checkpoint === 'string' ? route.query.checkpoint : null }),
    meta: { layout: 'app', title: 'Measurement sheet' },
  },
  {
    path: '/account',
    name: 'account',
    component: () => import('@/views/AccountView.vue'),
    meta: { layout: 'app', title: 'Account' },
  },
  {
    // Public: the password-reset flow opens it while signed out. The server answers 404 in production.
    path: '/dev/mail',
    name: 'dev-mail',
    component: () => import('@/views/DevMailView.vue'),
    meta: { public: true, layout: 'dev', title: 'Dev mailbox' },
  },
  {
    path: '/:pathMatch(.*)*',
    name: 'not-found',
    component: () => import('@/views/NotFoundView.vue'),
    meta: { public: true, title: 'Not found' },
  },
]

export const router = createRouter({
  history: createWebHistory(),
  routes,
  scrollBehavior: (_to, _from, saved) => saved ?? { top: 0 },
})

router.beforeEach(async (to) => {
  const session = useSessionStore()
  try {
    await session.load()
  } catch {
    // The server could not be reached: public pages still open; the rest wait for a session.
  }
  if (to.meta.guestOnly && session.signedIn) return { path: '/projects', replace: true }
  if (!to.meta.public && !session.signedIn) {
    // A guest's viewing pass opens one project (its page and its scenes), nothing else.
    if (session.guest) return to.params.projectId === session.guest.projectId ? true : { path: session.homePath, replace: true }
    return { path: '/sign-in', query: { redirect: to.fullPath }, replace: true }
  }
  return true
})

router.afterEach((to) => {
  document.title = to.meta.title ? `${to.meta.title} · Spanmark` : 'Spanmark'
})
