import { Op } from 'sequelize';
import type { Logger } from 'pino';
import { User } from '../models/index.js';
import { DEMO_DOMAIN, DEMO_PASSWORD } from './seed.js';
import { passwordMatches } from '../services/auth.js';
import { audit } from '../services/audit.js';

/**
 * In production without DRIFTBENCH_DEMO=1, the demo accounts (their password is in the README)
 * must not open the lab: every active demo account that still has the demo password is
 * deactivated and its tokens revoked. An account whose password was changed is left alone.
 * Returns the e-mails deactivated.
 */
export async function retireDemoAccounts(log?: Logger): Promise<string[]> {
  const candidates = await User.findAll({
    where: { email: { [Op.like]: `%@${DEMO_DOMAIN}` }, active: true },
  });
  const retired: string[] = [];
  for (const user of candidates) {
    if (!(await passwordMatches(DEMO_PASSWORD, user.passwordHash))) continue;
    await User.sequelize!.transaction(async (transaction) => {
      user.active = false;
      user.tokenVersion = user.tokenVersion + 1;
      await user.save({ transaction });
      await audit(
        null,
        'user.deactivate',
        'user',
        user.id,
        { reason: 'demo account in production' },
        transaction,
      );
    });
    retired.push(user.email);
  }
  if (retired.length)
    log?.warn(
      { accounts: retired },
      'demo accounts deactivated: production mode without DRIFTBENCH_DEMO=1',
    );
  return retired;
}
