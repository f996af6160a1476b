/*
 * engine_mpe: the mpe method, an MPE zone (MPE 1.0).
 *
 * The master channel (1 for the lower zone, 16 for the upper) is the
 * zone's global channel: the player's wheel, controllers, program and
 * pressure go there, and the MPE Configuration Message (RPN 6) sets the
 * zone up.  Notes rotate over the member channels as in the bend method
 * (engine_rotate_place), each member's bend carrying its note's retune at
 * the members' bend range (RPN 0); a poly pressure becomes its note's
 * channel pressure.  Notes go only to the members the output's channels
 * name, as the bend method's pool does: a member left out (channel 10, by
 * the config's default) carries what the input passes through on it, a
 * drum track say, instead of dropping it.
 */
#include "engine_method.h"

static bool mpe_plan(const struct engine_spec *spec, struct engine_channels *plan,
		     struct core_error *err)
{
	const struct engine_output_spec *o = &spec->output;
	if (o->mpe_members < 1 || o->mpe_members > 15)
		return core_fail(err, "mpe_members", "mpe_members is %d, expected 1 to 15",
				 o->mpe_members);
	bool lower = o->mpe_zone == MPE_ZONE_LOWER;
	plan->global_channel = lower ? 0 : 15;
	uint16_t zone = 0;
	for (int i = 1; i <= o->mpe_members; i++)
		zone |= (uint16_t)(1u << (lower ? i : 15 - i));
	plan->pool = zone & o->channels;
	if (plan->pool == 0)
		return core_fail(err, "channels",
				 "the output's channels name none of the zone's %d member channels (%d to %d), expected at least one of them",
				 o->mpe_members, lower ? 2 : 16 - o->mpe_members, lower ? o->mpe_members + 1 : 15);
	return true;
}

static void mpe_start(struct engine *e)
{
	/* the MCM resets ranges to 48/2 on the receiver, so RPN 0 follows it */
	engine_send_rpn(e, e->global_channel, RPN_MPE_CONFIGURATION,
			(uint8_t)e->spec.output.mpe_members);
	engine_send_rpn(e, e->global_channel, RPN_BEND_RANGE, (uint8_t)engine_global_range(e));
	for (int ch = 0; ch < 16; ch++)
		if (engine_in_pool(e, ch))
			engine_send_rpn(e, ch, RPN_BEND_RANGE, (uint8_t)e->spec.output.bend_range);
}

const struct engine_method engine_method_mpe = {
	.id = RETUNE_MPE,
	.name = "mpe",
	.plan = mpe_plan,
	.start = mpe_start,
	.place = engine_rotate_place,
	.tuning_changed = NULL,
	.bend_carries_retune = true,
	.pressure_per_channel = true,
};
