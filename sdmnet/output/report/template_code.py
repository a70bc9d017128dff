from jinja2.runtime import LoopContext, Macro, Markup, Namespace, TemplateNotFound, TemplateReference, TemplateRuntimeError, Undefined, escape, identity, internalcode, markup_join, missing, str_join
name = None

def root(context, missing=missing):
    resolve = context.resolve_or_missing
    undefined = environment.undefined
    concat = environment.concat
    cond_expr_undefined = Undefined
    if 0: yield None
    l_0_sections = resolve('sections')
    l_0_name = resolve('name')
    l_0_files_read = resolve('files_read')
    l_0_cautions = resolve('cautions')
    l_0_table = l_0_figure = l_0_value = l_0_details = l_0_no_interval = l_0_skip_note = l_0_names = l_0_simulation = l_0_comparison = l_0_resources = l_0_network = l_0_estimate = l_0_paths = l_0_plan = l_0_forecast = l_0_other_tables = l_0_inputs = l_0_run = l_0_has_plan = l_0_draw = missing
    try:
        t_1 = environment.filters['join']
    except KeyError:
        @internalcode
        def t_1(*unused):
            raise TemplateRuntimeError("No filter named 'join' found.")
    try:
        t_2 = environment.filters['length']
    except KeyError:
        @internalcode
        def t_2(*unused):
            raise TemplateRuntimeError("No filter named 'length' found.")
    try:
        t_3 = environment.filters['list']
    except KeyError:
        @internalcode
        def t_3(*unused):
            raise TemplateRuntimeError("No filter named 'list' found.")
    try:
        t_4 = environment.filters['selectattr']
    except KeyError:
        @internalcode
        def t_4(*unused):
            raise TemplateRuntimeError("No filter named 'selectattr' found.")
    try:
        t_5 = environment.tests['none']
    except KeyError:
        @internalcode
        def t_5(*unused):
            raise TemplateRuntimeError("No test named 'none' found.")
    pass
    def macro(l_1_t):
        t_6 = []
        if l_1_t is missing:
            l_1_t = undefined("parameter 't' was not provided", name='t')
        pass
        t_6.append(
            '<div class="table-wrap"><table>',
        )
        if environment.getattr(l_1_t, 'caption'):
            pass
            t_6.extend((
                '<caption>',
                escape(environment.getattr(l_1_t, 'caption')),
                '</caption>',
            ))
        t_6.append(
            '<thead><tr>',
        )
        for l_2_c in environment.getattr(l_1_t, 'columns'):
            _loop_vars = {}
            pass
            t_6.extend((
                '<th>',
                escape(l_2_c),
                '</th>',
            ))
        l_2_c = missing
        t_6.append(
            '</tr></thead><tbody>\n',
        )
        for l_2_row in environment.getattr(l_1_t, 'rows'):
            _loop_vars = {}
            pass
            t_6.append(
                '<tr>',
            )
            for l_3_cell in l_2_row:
                _loop_vars = {}
                pass
                if environment.getattr(l_3_cell, 'numeric'):
                    pass
                    t_6.extend((
                        '<td class="num">',
                        escape(environment.getattr(l_3_cell, 'text')),
                        '</td>',
                    ))
                else:
                    pass
                    t_6.extend((
                        '<td>',
                        escape(environment.getattr(l_3_cell, 'text')),
                        '</td>',
                    ))
            l_3_cell = missing
            t_6.append(
                '</tr>\n',
            )
        l_2_row = missing
        t_6.append(
            '</tbody></table></div>\n',
        )
        return concat(t_6)
    context.exported_vars.add('table')
    context.vars['table'] = l_0_table = Macro(environment, macro, 'table', ('t',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_f):
        t_7 = []
        if l_1_f is missing:
            l_1_f = undefined("parameter 'f' was not provided", name='f')
        pass
        t_7.extend((
            '<figure><img src="',
            escape(environment.getattr(l_1_f, 'uri')),
            '" width="',
            escape(environment.getattr(l_1_f, 'width')),
            '" height="',
            escape(environment.getattr(l_1_f, 'height')),
            '" alt="',
            escape(environment.getattr(l_1_f, 'alt')),
            '">\n<figcaption>',
            escape(environment.getattr(l_1_f, 'caption')),
            ' <span class="file">(',
            escape(environment.getattr(l_1_f, 'file')),
            ')</span></figcaption></figure>\n',
        ))
        return concat(t_7)
    context.exported_vars.add('figure')
    context.vars['figure'] = l_0_figure = Macro(environment, macro, 'figure', ('f',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_v):
        t_8 = []
        if l_1_v is missing:
            l_1_v = undefined("parameter 'v' was not provided", name='v')
        pass
        if (environment.getattr(l_1_v, 'kind') == 'table'):
            pass
            t_8.append(
                escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_v, 'content'))),
            )
        elif (environment.getattr(l_1_v, 'kind') == 'fields'):
            pass
            t_8.append(
                '<table class="kv">',
            )
            for (l_2_key, l_2_inner) in environment.getattr(l_1_v, 'content'):
                _loop_vars = {}
                pass
                t_8.extend((
                    '<tr><th>',
                    escape(l_2_key),
                    '</th><td>',
                    escape(context.call((undefined(name='value') if l_0_value is missing else l_0_value), l_2_inner, _loop_vars=_loop_vars)),
                    '</td></tr>',
                ))
            l_2_key = l_2_inner = missing
            t_8.append(
                '</table>',
            )
        elif (environment.getattr(l_1_v, 'kind') == 'lines'):
            pass
            l_2_loop = missing
            for l_2_line, l_2_loop in LoopContext(environment.getattr(l_1_v, 'content'), undefined):
                _loop_vars = {}
                pass
                if (not environment.getattr(l_2_loop, 'first')):
                    pass
                    t_8.append(
                        '<br>',
                    )
                t_8.append(
                    escape(l_2_line),
                )
            l_2_loop = l_2_line = missing
        elif (environment.getattr(l_1_v, 'kind') == 'none'):
            pass
            t_8.append(
                '<span class="quiet">none</span>',
            )
        elif (environment.getattr(l_1_v, 'kind') == 'unset'):
            pass
            t_8.append(
                '<span class="quiet">not set</span>',
            )
        else:
            pass
            t_8.append(
                escape(environment.getattr(l_1_v, 'content')),
            )
        return concat(t_8)
    context.exported_vars.add('value')
    context.vars['value'] = l_0_value = Macro(environment, macro, 'value', ('v',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_summary, l_1_caller):
        t_9 = []
        if l_1_summary is missing:
            l_1_summary = undefined("parameter 'summary' was not provided", name='summary')
        pass
        t_9.extend((
            '<details><summary>',
            escape(l_1_summary),
            '</summary>',
            escape(context.call(l_1_caller)),
            '</details>\n',
        ))
        return concat(t_9)
    context.exported_vars.add('details')
    context.vars['details'] = l_0_details = Macro(environment, macro, 'details', ('summary',), False, False, True, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_n):
        t_10 = []
        if l_1_n is missing:
            l_1_n = undefined("parameter 'n' was not provided", name='n')
        pass
        t_10.extend((
            '<p><strong>No confidence interval</strong> for ',
            escape(environment.getattr(l_1_n, 'blank')),
            ' of the ',
            escape(environment.getattr(l_1_n, 'rows')),
            ' rows of ',
            escape(environment.getattr(l_1_n, 'file')),
            ':\n',
            escape(environment.getattr(l_1_n, 'why')),
            ', so their interval columns are empty.  Rerun with <code>--replications 2</code> or more.</p>',
        ))
        return concat(t_10)
    context.exported_vars.add('no_interval')
    context.vars['no_interval'] = l_0_no_interval = Macro(environment, macro, 'no_interval', ('n',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_s):
        t_11 = []
        if l_1_s is missing:
            l_1_s = undefined("parameter 's' was not provided", name='s')
        pass
        t_11.extend((
            '<p class="quiet">Figure skipped: ',
            escape(environment.getattr(l_1_s, 'file')),
            ' lacks the column(s) ',
            escape(t_1(context.eval_ctx, environment.getattr(l_1_s, 'missing'), ', ')),
            '.</p>\n',
        ))
        return concat(t_11)
    context.exported_vars.add('skip_note')
    context.vars['skip_note'] = l_0_skip_note = Macro(environment, macro, 'skip_note', ('s',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_list):
        t_12 = []
        if l_1_list is missing:
            l_1_list = undefined("parameter 'list' was not provided", name='list')
        pass
        l_2_loop = missing
        for l_2_n, l_2_loop in LoopContext(l_1_list, undefined):
            _loop_vars = {}
            pass
            if (not environment.getattr(l_2_loop, 'first')):
                pass
                t_12.append(
                    escape((' and ' if environment.getattr(l_2_loop, 'last') else ', ')),
                )
            t_12.extend((
                '<strong>',
                escape(l_2_n),
                '</strong>',
            ))
        l_2_loop = l_2_n = missing
        return concat(t_12)
    context.exported_vars.add('names')
    context.vars['names'] = l_0_names = Macro(environment, macro, 'names', ('list',), False, False, False, context.eval_ctx.autoescape)
    def macro(l_1_d):
        t_13 = []
        l_1_f = resolve('f')
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        t_13.extend((
            '<p>Simulated offered loads: ',
            escape(environment.getattr(l_1_d, 'loads')),
            '.  Blocking is the share of requests refused; bandwidth\nblocking the share of requested Gb/s refused.  Intervals are 95 % confidence intervals over\nindependent replications.</p>\n',
        ))
        if environment.getattr(l_1_d, 'findings'):
            pass
            l_1_f = environment.getattr(l_1_d, 'findings')
            t_13.extend((
                '<ul class="findings">\n<li>',
                escape((markup_join(('At ', environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'at'), )) if environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'at') else "At each architecture's highest load")),
                ', the lowest request blocking is ',
                escape(environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'best')),
            ))
            if environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'interval'):
                pass
                t_13.extend((
                    ' (95 % interval ',
                    escape(environment.getitem(environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'interval'), 0)),
                    ' to ',
                    escape(environment.getitem(environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'interval'), 1)),
                    ')',
                ))
            t_13.extend((
                ': ',
                escape(context.call((undefined(name='names') if l_0_names is missing else l_0_names), environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'winners'))),
                '.</li>\n',
            ))
            if environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'worst'):
                pass
                t_13.extend((
                    '<li>The highest is ',
                    escape(environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'worst')),
                    ': ',
                    escape(context.call((undefined(name='names') if l_0_names is missing else l_0_names), environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'losers'))),
                    '.</li>\n',
                ))
            for l_2_line in environment.getattr((undefined(name='f') if l_1_f is missing else l_1_f), 'alike'):
                _loop_vars = {}
                pass
                t_13.extend((
                    '<li>',
                    escape(l_2_line),
                    '</li>\n',
                ))
            l_2_line = missing
            t_13.append(
                '<li>Equipment is not ranked across architectures whose blocking differs;',
            )
            if (undefined(name='has_plan') if l_0_has_plan is missing else l_0_has_plan):
                pass
                t_13.append(
                    ' <a href="#comparison">At equal blocking</a> compares them at their plan.',
                )
            else:
                pass
                t_13.append(
                    ' <code>sdmnet plan</code> compares them at equal blocking.',
                )
            t_13.append(
                '</li>\n</ul>\n',
            )
        if environment.getattr(l_1_d, 'skipped'):
            pass
            t_13.append(
                escape(context.call((undefined(name='skip_note') if l_0_skip_note is missing else l_0_skip_note), environment.getattr(l_1_d, 'skipped'))),
            )
        if environment.getattr(l_1_d, 'no_interval'):
            pass
            t_13.append(
                escape(context.call((undefined(name='no_interval') if l_0_no_interval is missing else l_0_no_interval), environment.getattr(l_1_d, 'no_interval'))),
            )
        if environment.getattr(l_1_d, 'unsteady'):
            pass
            t_13.extend((
                '<p class="warning"><strong>Warning: these results depend on the start.</strong> The replications of\n',
                escape(t_1(context.eval_ctx, environment.getattr(l_1_d, 'unsteady'), '; ')),
                ' disagree far more than the spread of batches inside each replication\nallows (<code>steady_state = no</code>): each replication froze in a different state, so the mean and\nits interval describe the warm-up, not the network.</p>\n',
            ))
        for l_2_f in environment.getattr(l_1_d, 'figures'):
            _loop_vars = {}
            pass
            t_13.append(
                escape(context.call((undefined(name='figure') if l_0_figure is missing else l_0_figure), l_2_f, _loop_vars=_loop_vars)),
            )
        l_2_f = missing
        t_13.extend((
            escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'table'))),
            '\n',
        ))
        return concat(t_13)
    context.exported_vars.add('simulation')
    context.vars['simulation'] = l_0_simulation = Macro(environment, macro, 'simulation', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_d):
        t_14 = []
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        t_14.append(
            '<p>Every architecture was dimensioned for the same target blocking, so its equipment is compared at\nan equal grade of service.  Transceivers are counted in lanes, installed per site so that a site\nruns short at most one time in <code>[transceiver] overflow</code>; switch ports include add/drop\nports.  Costs are relative (one transceiver lane = 1); the default prices and watts, and where they\ncome from, are listed in docs/model.md, section 6.</p>\n',
        )
        if environment.getattr(l_1_d, 'lines'):
            pass
            t_14.append(
                '<ul class="findings">\n',
            )
            for l_2_line in environment.getattr(l_1_d, 'lines'):
                _loop_vars = {}
                pass
                t_14.extend((
                    '<li>',
                    escape(l_2_line),
                    '</li>\n',
                ))
            l_2_line = missing
            t_14.append(
                '</ul>\n',
            )
        t_14.extend((
            escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'table'))),
            '\n',
        ))
        if environment.getattr(l_1_d, 'breakdown'):
            pass
            def macro():
                t_15 = []
                pass
                t_15.append(
                    escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'breakdown'))),
                )
                return concat(t_15)
            caller = Macro(environment, macro, None, (), False, False, False, context.eval_ctx.autoescape)
            t_14.append(context.call((undefined(name='details') if l_0_details is missing else l_0_details), 'Cost per item and architecture', caller=caller))
        if environment.getattr(l_1_d, 'costs'):
            pass
            def macro():
                t_16 = []
                pass
                t_16.append(
                    escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'costs'))),
                )
                return concat(t_16)
            caller = Macro(environment, macro, None, (), False, False, False, context.eval_ctx.autoescape)
            t_14.append(context.call((undefined(name='details') if l_0_details is missing else l_0_details), 'Counts, unit prices and watts (cost.csv)', caller=caller))
        return concat(t_14)
    context.exported_vars.add('comparison')
    context.vars['comparison'] = l_0_comparison = Macro(environment, macro, 'comparison', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_d):
        t_17 = []
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        if environment.getattr(l_1_d, 'skipped'):
            pass
            t_17.extend((
                escape(context.call((undefined(name='skip_note') if l_0_skip_note is missing else l_0_skip_note), environment.getattr(l_1_d, 'skipped'))),
                '\n',
            ))
        else:
            pass
            t_17.extend((
                '<p>Installed transceiver lanes and the lanes in use grow with load and are shown at the highest\nload point; blocking differs between architectures there, so these bars are not a ranking.</p>\n',
                escape(context.call((undefined(name='figure') if l_0_figure is missing else l_0_figure), environment.getattr(l_1_d, 'figure'))),
                '\n',
            ))
            for (l_2_caption, l_2_t) in environment.getattr(l_1_d, 'details'):
                _loop_vars = {}
                pass
                def macro():
                    t_18 = []
                    pass
                    t_18.append(
                        escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), l_2_t)),
                    )
                    return concat(t_18)
                caller = Macro(environment, macro, None, (), False, False, False, context.eval_ctx.autoescape)
                t_17.append(context.call((undefined(name='details') if l_0_details is missing else l_0_details), l_2_caption, caller=caller, _loop_vars=_loop_vars))
            l_2_caption = l_2_t = missing
        return concat(t_17)
    context.exported_vars.add('resources')
    context.vars['resources'] = l_0_resources = Macro(environment, macro, 'resources', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_d):
        t_19 = []
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        if environment.getattr(l_1_d, 'figure'):
            pass
            t_19.extend((
                escape(context.call((undefined(name='figure') if l_0_figure is missing else l_0_figure), environment.getattr(l_1_d, 'figure'))),
                '\n',
            ))
            if environment.getattr(l_1_d, 'table'):
                pass
                def macro():
                    t_20 = []
                    pass
                    t_20.append(
                        escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'table'))),
                    )
                    return concat(t_20)
                caller = Macro(environment, macro, None, (), False, False, False, context.eval_ctx.autoescape)
                t_19.append(context.call((undefined(name='details') if l_0_details is missing else l_0_details), 'Cable utilisation at the highest load (cables.csv)', caller=caller))
        else:
            pass
            t_19.extend((
                '<p class="quiet">Figure skipped: run.json holds no topology.</p>\n',
                escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'table'))),
                '\n',
            ))
        return concat(t_19)
    context.exported_vars.add('network')
    context.vars['network'] = l_0_network = Macro(environment, macro, 'network', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_d):
        t_21 = []
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        t_21.append(
            '<p>The analytic estimate needs no simulation; where both exist, the figure sets it beside the\nsimulated results.  Large gaps point at effects the estimate leaves out.</p>\n',
        )
        if environment.getattr(l_1_d, 'skipped'):
            pass
            t_21.append(
                escape(context.call((undefined(name='skip_note') if l_0_skip_note is missing else l_0_skip_note), environment.getattr(l_1_d, 'skipped'))),
            )
        else:
            pass
            t_21.append(
                escape(context.call((undefined(name='figure') if l_0_figure is missing else l_0_figure), environment.getattr(l_1_d, 'figure'))),
            )
        if (environment.getattr(l_1_d, 'gaps') and environment.getattr(environment.getattr(l_1_d, 'gaps'), 'rows')):
            pass
            t_21.extend((
                '<p>The estimate falls outside the simulated interval at ',
                escape(t_2(environment.getattr(environment.getattr(l_1_d, 'gaps'), 'rows'))),
                ' of ',
                escape(environment.getattr(environment.getattr(l_1_d, 'gaps'), 'points')),
                ' load\npoints; the assumption that breaks there is named (see docs/estimate.md):</p>\n<ul class="gaps">\n',
            ))
            for l_2_g in environment.getattr(environment.getattr(l_1_d, 'gaps'), 'rows'):
                _loop_vars = {}
                pass
                t_21.extend((
                    '<li><b>',
                    escape(environment.getattr(l_2_g, 'architecture')),
                    '</b> at ',
                    escape(environment.getattr(l_2_g, 'load')),
                    ' Erlang: estimate ',
                    escape(environment.getattr(l_2_g, 'estimate')),
                    ', simulated ',
                    escape(environment.getattr(l_2_g, 'simulated')),
                    '\n[',
                    escape(environment.getattr(l_2_g, 'low')),
                    ', ',
                    escape(environment.getattr(l_2_g, 'high')),
                    ']: ',
                    escape(environment.getattr(l_2_g, 'why')),
                    '</li>\n',
                ))
            l_2_g = missing
            t_21.append(
                '</ul>\n',
            )
        elif environment.getattr(l_1_d, 'gaps'):
            pass
            t_21.append(
                '<p>At every simulated load point the estimate lies inside the simulated 95 % interval.</p>\n',
            )
        t_21.extend((
            escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'table'))),
            '\n',
        ))
        return concat(t_21)
    context.exported_vars.add('estimate')
    context.vars['estimate'] = l_0_estimate = Macro(environment, macro, 'estimate', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_d):
        t_22 = []
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        if (not t_5(environment.getattr(l_1_d, 'feasible'))):
            pass
            t_22.extend((
                '<p>',
                escape(environment.getattr(l_1_d, 'count')),
                ' candidate paths, ',
                escape(environment.getattr(l_1_d, 'feasible')),
                ' physically feasible.</p>\n',
            ))
            if environment.getattr(l_1_d, 'figure'):
                pass
                t_22.append(
                    escape(context.call((undefined(name='figure') if l_0_figure is missing else l_0_figure), environment.getattr(l_1_d, 'figure'))),
                )
            if environment.getattr(l_1_d, 'stranded'):
                pass
                t_22.extend((
                    '<p><strong>No feasible path</strong> for: ',
                    escape(t_1(context.eval_ctx, environment.getattr(l_1_d, 'stranded'), '; ')),
                    '.</p>\n',
                ))
            if environment.getattr(l_1_d, 'refused'):
                pass
                def macro():
                    t_23 = []
                    pass
                    t_23.append(
                        escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getitem(environment.getattr(l_1_d, 'refused'), 1))),
                    )
                    return concat(t_23)
                caller = Macro(environment, macro, None, (), False, False, False, context.eval_ctx.autoescape)
                t_22.append(context.call((undefined(name='details') if l_0_details is missing else l_0_details), ('Refused paths and why (%d rows)' % environment.getitem(environment.getattr(l_1_d, 'refused'), 0)), caller=caller))
        def macro():
            t_24 = []
            pass
            t_24.append(
                escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'table'))),
            )
            return concat(t_24)
        caller = Macro(environment, macro, None, (), False, False, False, context.eval_ctx.autoescape)
        t_22.append(context.call((undefined(name='details') if l_0_details is missing else l_0_details), ('Candidate paths (%d rows, paths.csv)' % environment.getattr(l_1_d, 'count')), caller=caller))
        return concat(t_22)
    context.exported_vars.add('paths')
    context.vars['paths'] = l_0_paths = Macro(environment, macro, 'paths', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_d):
        t_25 = []
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        if environment.getattr(l_1_d, 'skipped'):
            pass
            t_25.append(
                escape(context.call((undefined(name='skip_note') if l_0_skip_note is missing else l_0_skip_note), environment.getattr(l_1_d, 'skipped'))),
            )
        if environment.getattr(l_1_d, 'no_interval'):
            pass
            t_25.append(
                escape(context.call((undefined(name='no_interval') if l_0_no_interval is missing else l_0_no_interval), environment.getattr(l_1_d, 'no_interval'))),
            )
        if environment.getattr(l_1_d, 'figure'):
            pass
            t_25.extend((
                escape(context.call((undefined(name='figure') if l_0_figure is missing else l_0_figure), environment.getattr(l_1_d, 'figure'))),
                '\n',
                escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'pivot'))),
                '\n',
            ))
        if environment.getattr(l_1_d, 'table'):
            pass
            def macro():
                t_26 = []
                pass
                t_26.append(
                    escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'table'))),
                )
                return concat(t_26)
            caller = Macro(environment, macro, None, (), False, False, False, context.eval_ctx.autoescape)
            t_25.append(context.call((undefined(name='details') if l_0_details is missing else l_0_details), 'Plan with blocking per cable (plan.csv)', caller=caller))
        if environment.getattr(l_1_d, 'totals'):
            pass
            t_25.append(
                escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'totals'))),
            )
        return concat(t_25)
    context.exported_vars.add('plan')
    context.vars['plan'] = l_0_plan = Macro(environment, macro, 'plan', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_d):
        t_27 = []
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        if environment.getattr(l_1_d, 'skipped'):
            pass
            t_27.append(
                escape(context.call((undefined(name='skip_note') if l_0_skip_note is missing else l_0_skip_note), environment.getattr(l_1_d, 'skipped'))),
            )
        if environment.getattr(l_1_d, 'figure'):
            pass
            t_27.append(
                escape(context.call((undefined(name='figure') if l_0_figure is missing else l_0_figure), environment.getattr(l_1_d, 'figure'))),
            )
        if environment.getattr(l_1_d, 'totals'):
            pass
            t_27.append(
                escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getattr(l_1_d, 'totals'))),
            )
        if (not t_5(environment.getattr(l_1_d, 'notes'))):
            pass
            def macro():
                t_28 = []
                pass
                t_28.extend((
                    '<pre>',
                    escape(environment.getattr(l_1_d, 'notes')),
                    '</pre>',
                ))
                return concat(t_28)
            caller = Macro(environment, macro, None, (), False, False, False, context.eval_ctx.autoescape)
            t_27.append(context.call((undefined(name='details') if l_0_details is missing else l_0_details), 'Forecast notes (forecast_notes.txt)', caller=caller))
        if environment.getattr(l_1_d, 'table'):
            pass
            def macro():
                t_29 = []
                pass
                t_29.append(
                    escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), environment.getitem(environment.getattr(l_1_d, 'table'), 1))),
                )
                return concat(t_29)
            caller = Macro(environment, macro, None, (), False, False, False, context.eval_ctx.autoescape)
            t_27.append(context.call((undefined(name='details') if l_0_details is missing else l_0_details), ('Forecast per cable (%d rows, forecast.csv)' % environment.getitem(environment.getattr(l_1_d, 'table'), 0)), caller=caller))
        return concat(t_27)
    context.exported_vars.add('forecast')
    context.vars['forecast'] = l_0_forecast = Macro(environment, macro, 'forecast', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_d):
        t_30 = []
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        for (l_2_name, l_2_rows, l_2_t) in environment.getattr(l_1_d, 'tables'):
            _loop_vars = {}
            pass
            def macro():
                t_31 = []
                pass
                t_31.append(
                    escape(context.call((undefined(name='table') if l_0_table is missing else l_0_table), l_2_t)),
                )
                return concat(t_31)
            caller = Macro(environment, macro, None, (), False, False, False, context.eval_ctx.autoescape)
            t_30.append(context.call((undefined(name='details') if l_0_details is missing else l_0_details), ('%s (%d rows)' % (l_2_name, l_2_rows)), caller=caller, _loop_vars=_loop_vars))
        l_2_name = l_2_rows = l_2_t = missing
        return concat(t_30)
    context.exported_vars.add('other_tables')
    context.vars['other_tables'] = l_0_other_tables = Macro(environment, macro, 'other_tables', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_d):
        t_32 = []
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        if environment.getattr(l_1_d, 'files'):
            pass
            t_32.extend((
                escape(context.call((undefined(name='value') if l_0_value is missing else l_0_value), environment.getattr(l_1_d, 'files'))),
                '\n',
            ))
        if environment.getattr(l_1_d, 'general'):
            pass
            t_32.extend((
                escape(context.call((undefined(name='value') if l_0_value is missing else l_0_value), environment.getattr(l_1_d, 'general'))),
                '\n',
            ))
        for (l_2_key, l_2_v) in environment.getattr(l_1_d, 'nested'):
            _loop_vars = {}
            pass
            t_32.extend((
                '<h3>',
                escape(l_2_key),
                '</h3>',
                escape(context.call((undefined(name='value') if l_0_value is missing else l_0_value), l_2_v, _loop_vars=_loop_vars)),
                '\n',
            ))
        l_2_key = l_2_v = missing
        if environment.getattr(l_1_d, 'topology'):
            pass
            t_32.extend((
                '<h3>topology: ',
                escape(environment.getattr(environment.getattr(l_1_d, 'topology'), 'name')),
                '</h3>\n',
            ))
            for (l_2_key, l_2_v) in environment.getattr(environment.getattr(l_1_d, 'topology'), 'parts'):
                _loop_vars = {}
                pass
                t_32.extend((
                    '<h4>',
                    escape(l_2_key),
                    '</h4>',
                    escape(context.call((undefined(name='value') if l_0_value is missing else l_0_value), l_2_v, _loop_vars=_loop_vars)),
                    '\n',
                ))
            l_2_key = l_2_v = missing
            if environment.getattr(environment.getattr(l_1_d, 'topology'), 'rest'):
                pass
                t_32.extend((
                    escape(context.call((undefined(name='value') if l_0_value is missing else l_0_value), environment.getattr(environment.getattr(l_1_d, 'topology'), 'rest'))),
                    '\n',
                ))
        return concat(t_32)
    context.exported_vars.add('inputs')
    context.vars['inputs'] = l_0_inputs = Macro(environment, macro, 'inputs', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_d):
        t_33 = []
        if l_1_d is missing:
            l_1_d = undefined("parameter 'd' was not provided", name='d')
        pass
        t_33.extend((
            escape(context.call((undefined(name='value') if l_0_value is missing else l_0_value), environment.getattr(l_1_d, 'facts'))),
            '\n',
        ))
        for (l_2_title, l_2_v) in environment.getattr(l_1_d, 'parts'):
            _loop_vars = {}
            pass
            t_33.extend((
                '<h3>',
                escape(l_2_title),
                '</h3>',
                escape(context.call((undefined(name='value') if l_0_value is missing else l_0_value), l_2_v, _loop_vars=_loop_vars)),
                '\n',
            ))
        l_2_title = l_2_v = missing
        return concat(t_33)
    context.exported_vars.add('run')
    context.vars['run'] = l_0_run = Macro(environment, macro, 'run', ('d',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    l_0_has_plan = (t_2(t_3(context.eval_ctx, t_4(context, (undefined(name='sections') if l_0_sections is missing else l_0_sections), 'anchor', 'equalto', 'comparison'))) > 0)
    context.vars['has_plan'] = l_0_has_plan
    context.exported_vars.add('has_plan')
    l_0_draw = {'comparison': (undefined(name='comparison') if l_0_comparison is missing else l_0_comparison), 'simulation': (undefined(name='simulation') if l_0_simulation is missing else l_0_simulation), 'resources': (undefined(name='resources') if l_0_resources is missing else l_0_resources), 'network': (undefined(name='network') if l_0_network is missing else l_0_network), 'estimate': (undefined(name='estimate') if l_0_estimate is missing else l_0_estimate), 'paths': (undefined(name='paths') if l_0_paths is missing else l_0_paths), 'plan': (undefined(name='plan') if l_0_plan is missing else l_0_plan), 'forecast': (undefined(name='forecast') if l_0_forecast is missing else l_0_forecast), 'other_tables': (undefined(name='other_tables') if l_0_other_tables is missing else l_0_other_tables), 'inputs': (undefined(name='inputs') if l_0_inputs is missing else l_0_inputs), 'run': (undefined(name='run') if l_0_run is missing else l_0_run)}
    context.vars['draw'] = l_0_draw
    context.exported_vars.add('draw')
    yield '<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8">\n<meta name="viewport" content="width=device-width, initial-scale=1">\n<title>sdmnet report: '
    yield escape((undefined(name='name') if l_0_name is missing else l_0_name))
    yield '</title>\n<style>\n:root { --ink: #222; --quiet: #5a5a5a; --rule: #d6d6d6; --accent: #0072B2; --band: #f4f6f8; }\n* { box-sizing: border-box; }\nbody { font-family: "DejaVu Sans", "Helvetica Neue", Arial, sans-serif; color: var(--ink); margin: 0;\n       line-height: 1.45; font-size: 15px; background: #fff; }\nmain { max-width: 1180px; margin: 0 auto; padding: 24px 28px 64px; }\nh1 { font-size: 1.7em; margin: 0 0 4px; }\nh2 { font-size: 1.3em; margin: 36px 0 10px; padding-bottom: 4px; border-bottom: 2px solid var(--accent); }\nh3 { font-size: 1.05em; margin: 20px 0 6px; }\nh4 { font-size: 0.95em; margin: 14px 0 4px; color: var(--quiet); }\n.sub { color: var(--quiet); margin: 0 0 16px; }\nnav ol { margin: 6px 0 0; padding-left: 22px; columns: 2; }\n.caution { border-left: 5px solid #D55E00; background: #fbf3ee; padding: 10px 14px; margin: 16px 0; }\nfigure { margin: 18px 0; }\nfigure img { display: block; max-width: 100%; height: auto; border: 1px solid var(--rule); }\nfigcaption { color: var(--quiet); font-size: 0.9em; margin-top: 6px; }\n.file, .quiet { color: var(--quiet); }\n.table-wrap { overflow-x: auto; margin: 10px 0 16px; }\ntable { border-collapse: collapse; font-size: 0.85em; }\ncaption { text-align: left; font-weight: bold; padding: 4px 0; white-space: nowrap; }\nth, td { border-bottom: 1px solid var(--rule); padding: 3px 9px; text-align: left; vertical-align: top;\n         white-space: nowrap; }\ntable.kv td { white-space: normal; }\nthead th { background: var(--band); border-bottom: 2px solid #999; white-space: nowrap; }\ntbody tr:nth-child(even) { background: #fafafa; }\ntd.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }\ntable.kv th { background: none; white-space: nowrap; font-weight: bold; }\ndetails { margin: 8px 0 14px; }\nsummary { cursor: pointer; color: var(--accent); }\npre { white-space: pre-wrap; font-size: 0.85em; background: var(--band); padding: 8px; }\nul.findings { background: var(--band); padding: 10px 14px 10px 32px; }\np.warning { border-left: 4px solid currentColor; padding: 6px 12px; }\n@media print { details { display: block; } nav { display: none; } figure { break-inside: avoid; } }\n</style>\n</head>\n<body>\n<main>\n<h1>Network plan: '
    yield escape((undefined(name='name') if l_0_name is missing else l_0_name))
    yield '</h1>\n<p class="sub">Planning report for the scenario <strong>'
    yield escape((undefined(name='name') if l_0_name is missing else l_0_name))
    yield '</strong>.  Files read: '
    yield escape(t_1(context.eval_ctx, (undefined(name='files_read') if l_0_files_read is missing else l_0_files_read), ', '))
    yield '.</p>\n<div class="caution" id="cautions"><strong>Cautions.</strong> '
    yield escape((undefined(name='cautions') if l_0_cautions is missing else l_0_cautions))
    yield '</div>\n<nav><strong>Contents</strong><ol>'
    for l_1_s in (undefined(name='sections') if l_0_sections is missing else l_0_sections):
        _loop_vars = {}
        pass
        yield '<li><a href="#'
        yield escape(environment.getattr(l_1_s, 'anchor'))
        yield '">'
        yield escape(environment.getattr(l_1_s, 'title'))
        yield '</a></li>'
    l_1_s = missing
    yield '</ol></nav>\n'
    for l_1_s in (undefined(name='sections') if l_0_sections is missing else l_0_sections):
        _loop_vars = {}
        pass
        yield '<section id="'
        yield escape(environment.getattr(l_1_s, 'anchor'))
        yield '"><h2>'
        yield escape(environment.getattr(l_1_s, 'title'))
        yield '</h2>\n'
        yield escape(context.call(environment.getitem((undefined(name='draw') if l_0_draw is missing else l_0_draw), environment.getattr(l_1_s, 'macro')), environment.getattr(l_1_s, 'data'), _loop_vars=_loop_vars))
        yield '\n</section>\n'
    l_1_s = missing
    yield '</main>\n</body>\n</html>\n'

blocks = {}
debug_info = '12=46&13=54&14=64&16=76&17=82&22=111&23=118&24=126&27=135&28=140&29=145&30=150&32=164&33=179&34=184&35=192&38=198&39=205&42=214&43=221&44=227&47=234&48=241&51=250&52=256&57=273&58=281&61=284&62=286&64=289&65=293&66=307&67=311&69=316&70=321&73=328&77=341&78=346&79=351&81=355&85=358&86=366&89=373&95=381&97=386&101=399&102=402&103=413&106=428&107=433&108=436&112=443&113=446&114=449&119=463&120=468&121=471&122=474&125=489&129=496&132=504&133=514&134=518&137=523&138=528&139=536&142=547&145=553&148=560&149=565&150=569&151=574&152=579&153=583&155=586&156=588&159=597&162=610&163=615&164=620&165=625&166=628&167=630&169=633&170=635&172=644&175=653&176=658&177=663&178=668&179=673&180=675&182=686&183=688&187=701&188=706&189=709&193=723&194=728&196=734&198=740&199=745&201=751&202=755&203=758&204=763&206=769&211=779&212=785&213=788&214=793&218=803&219=806&231=810&269=812&270=814&271=818&273=820&275=830&276=834&277=838'

# Written by sdmnet.output.report.template_code_text() from report.html.j2; do not edit
# (python tools/compile_report_template.py).  Used while these match:
SOURCE_SHA256 = '1308671ce2c01b9673d1effdaf60f9ea7051d598a98e876c31d8fd837e65c3b1'
JINJA2_VERSION = '3.1.6'
