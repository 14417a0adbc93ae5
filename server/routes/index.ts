import { authRoutes } from './auth'
import { checkpointRoutes } from './checkpoints'
import { exportRoutes } from './exports'
import { inviteRoutes } from './invites'
import { passRoutes } from './passes'
import { commentRoutes } from './comments'
import { markerRoutes } from './markers'
import { objectRoutes } from './objects'
import { projectRoutes } from './projects'
import { registrationRoutes } from './registrations'
import type { RouteDef } from './registry'
import { scanRoutes } from './scans'
import { uploadRoutes } from './uploads'
import { sceneRoutes } from './scenes'
import { sheetRoutes } from './sheet'
import { systemRoutes } from './system'

/** Every API route, in one list: the app mounts it and the authorization test walks it. */
export const apiRoutes: RouteDef[] = [...systemRoutes, ...authRoutes, ...projectRoutes, ...scanRoutes, ...uploadRoutes, ...sceneRoutes, ...exportRoutes, ...markerRoutes, ...objectRoutes, ...commentRoutes, ...checkpointRoutes, ...sheetRoutes, ...registrationRoutes, ...inviteRoutes, ...passRoutes]
