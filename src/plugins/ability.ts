import { createAppAbility } from '@shared/abilities/index.ts'

/** The app's single ability instance; the session store updates its rules at sign-in and sign-out. */
export const ability = createAppAbility()
