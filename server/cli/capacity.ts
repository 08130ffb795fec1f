// `earshot capacity --input FILE|- [--json]`: airtime, offered load, collision
// survival and the duty-cycle budget of a stand-alone scenario of node groups
// at one gateway. The work is in server/app/capacity.ts (capacityScenario) and
// the pure engine server/capacity/; this file reads the input and prints.
import { z } from 'zod';
import { capacityScenario, type ScenarioAnswer } from '../app/capacity.ts';
import { isAppError } from '../app/errors.ts';
import { CliUsageError, defineCommand, stringOption, type CommandDefinition } from './framework.ts';
import { readInput } from './propagation.ts';

export const capacityCommands: CommandDefinition[] = [
  defineCommand({
    words: 'capacity',
    options: z.strictObject({ input: stringOption() }),
    async run(options, context) {
      const raw = await readInput(options.input, context.readStdin);
      try {
        return capacityScenario(raw);
      } catch (error) {
        if (isAppError(error)) throw new CliUsageError(error.message);
        throw error;
      }
    },
    formatText: (result) => {
      const answer = result as ScenarioAnswer;
      const lines = [`${answer.model} on ${answer.bandPlan}, ${answer.channels} channel(s)${answer.durationS !== null ? `, ${answer.durationS} s simulated (seed ${answer.seed})` : ''}`];
      for (const g of answer.groups) {
        const budget = g.maxMessagesPerHourAtDutyCycle === null ? 'no duty-cycle limit' : `duty-cycle budget ${g.maxMessagesPerHourAtDutyCycle} msg/h`;
        lines.push(
          `SF${g.sf}/${g.bandwidthKhz} kHz ${String(g.nodes).padStart(6)} nodes × ${g.messagesPerHour} msg/h  ToA ${g.timeOnAirMs.toFixed(1)} ms  load ${g.offeredLoadErlang.toFixed(4)} erlang/channel  success ${(g.successProbability * 100).toFixed(1)} %  ${budget}${g.overBudget ? '  OVER BUDGET' : ''}`,
        );
      }
      return lines.join('\n');
    },
  }),
];
