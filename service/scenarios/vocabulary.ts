/**
 * Words the scenario generator draws from: invented apps and their flows,
 * column names, platform spellings, timezones, dimensions and parameters.
 * Every app here is made up for plumbline's evaluation; none is a real
 * product or company.
 */

export interface DomainFlow {
  id: string;
  title: string;
  /** Six step names in funnel order; a scenario keeps the first, the last and some in between. */
  steps: readonly [string, string, string, string, string, string];
}

export interface Domain {
  app: string;
  what: string;
  /** Short word for e-mail addresses and table names. */
  slug: string;
  flows: readonly DomainFlow[];
  /** Values of the enum parameter every domain has (what kind of thing is being bought or booked). */
  kinds: readonly string[];
}

export const DOMAINS: readonly Domain[] = [
  {
    app: 'Saltmarsh Swim School',
    what: 'swimming lessons for children and adults at three pools',
    slug: 'saltmarsh',
    kinds: ['toddler', 'junior', 'adult', 'private'],
    flows: [
      { id: 'book_lesson', title: 'Book a lesson block', steps: ['pool_list', 'level_check', 'slot_grid', 'swimmer_form', 'payment', 'booked'] },
      { id: 'join_waitlist', title: 'Join a waiting list', steps: ['waitlist_intro', 'pool_pick', 'contact_form', 'consent', 'submit', 'confirmed'] },
      { id: 'swap_slot', title: 'Swap a lesson slot', steps: ['my_lessons', 'swap_start', 'new_slot', 'rules', 'confirm', 'swapped'] },
    ],
  },
  {
    app: 'Quillwater Lending Library',
    what: 'a town library lending e-books and audiobooks',
    slug: 'quillwater',
    kinds: ['ebook', 'audiobook', 'magazine'],
    flows: [
      { id: 'borrow_title', title: 'Borrow a title', steps: ['catalogue', 'title_page', 'format_pick', 'loan_terms', 'checkout', 'loaned'] },
      { id: 'place_hold', title: 'Place a hold', steps: ['search', 'title_detail', 'hold_start', 'branch_pick', 'notify_prefs', 'held'] },
      { id: 'renew_card', title: 'Renew a library card', steps: ['account', 'card_status', 'address_check', 'id_upload', 'review', 'renewed'] },
    ],
  },
  {
    app: 'Copperkettle Bakery',
    what: 'a neighbourhood bakery taking preorders for pickup',
    slug: 'copperkettle',
    kinds: ['loaf', 'pastry', 'cake', 'box'],
    flows: [
      { id: 'preorder', title: 'Preorder for pickup', steps: ['menu', 'item_sheet', 'basket', 'pickup_time', 'pay', 'ordered'] },
      { id: 'custom_cake', title: 'Order a custom cake', steps: ['cake_intro', 'size_step', 'flavour_step', 'message_step', 'deposit', 'requested'] },
    ],
  },
  {
    app: 'Driftwood Bike Share',
    what: 'a seaside town bike share with docks and e-bikes',
    slug: 'driftwood',
    kinds: ['classic', 'ebike', 'cargo'],
    flows: [
      { id: 'unlock_ride', title: 'Unlock a bike', steps: ['map', 'dock_card', 'bike_pick', 'safety_note', 'unlock', 'riding'] },
      { id: 'buy_membership', title: 'Buy a membership', steps: ['plans', 'plan_detail', 'rider_info', 'card_entry', 'charge', 'member'] },
      { id: 'report_fault', title: 'Report a faulty bike', steps: ['help', 'fault_start', 'fault_type', 'photo', 'send', 'logged'] },
    ],
  },
  {
    app: 'Hollowpine Campgrounds',
    what: 'campsite booking across a regional park network',
    slug: 'hollowpine',
    kinds: ['tent', 'caravan', 'cabin', 'group'],
    flows: [
      { id: 'book_pitch', title: 'Book a pitch', steps: ['park_search', 'park_page', 'dates', 'pitch_map', 'guest_details', 'reserved'] },
      { id: 'buy_firewood', title: 'Add firewood to a stay', steps: ['stay_page', 'extras', 'firewood_qty', 'delivery_spot', 'pay_extra', 'added'] },
    ],
  },
  {
    app: 'Brambleway Allotments',
    what: 'renting community garden plots and tool lockers',
    slug: 'brambleway',
    kinds: ['half_plot', 'full_plot', 'raised_bed', 'locker'],
    flows: [
      { id: 'rent_plot', title: 'Rent a plot', steps: ['site_map', 'plot_card', 'rules_read', 'tenant_form', 'direct_debit', 'rented'] },
      { id: 'book_tool', title: 'Book a shared tool', steps: ['tool_shed', 'tool_page', 'day_pick', 'deposit_info', 'confirm_tool', 'tool_booked'] },
    ],
  },
  {
    app: 'Glimmerfield Concert Hall',
    what: 'tickets for a mid-sized concert hall',
    slug: 'glimmerfield',
    kinds: ['stalls', 'balcony', 'standing', 'box_seat'],
    flows: [
      { id: 'buy_tickets', title: 'Buy tickets', steps: ['whats_on', 'show_page', 'seat_map', 'basket_review', 'card_pay', 'issued'] },
      { id: 'gift_voucher', title: 'Send a gift voucher', steps: ['voucher_home', 'amount_pick', 'design', 'recipient', 'pay_voucher', 'sent'] },
      { id: 'return_ticket', title: 'Return a ticket', steps: ['my_tickets', 'return_start', 'reason', 'refund_route', 'agree', 'returned'] },
    ],
  },
  {
    app: 'Pebblecourt Tennis Club',
    what: 'court booking and coaching for a members tennis club',
    slug: 'pebblecourt',
    kinds: ['hard_court', 'clay_court', 'indoor', 'coaching'],
    flows: [
      { id: 'book_court', title: 'Book a court', steps: ['courts', 'day_view', 'hour_pick', 'partner_add', 'fee', 'court_booked'] },
      { id: 'join_club', title: 'Join the club', steps: ['membership', 'category', 'applicant', 'referee', 'first_fee', 'joined'] },
    ],
  },
  {
    app: 'Thistledown Pet Sitters',
    what: 'matching pet owners with local sitters',
    slug: 'thistledown',
    kinds: ['dog', 'cat', 'small_pet', 'bird'],
    flows: [
      { id: 'request_sitter', title: 'Request a sitter', steps: ['home', 'pet_profile', 'dates_pick', 'sitter_list', 'request', 'matched'] },
      { id: 'sitter_signup', title: 'Become a sitter', steps: ['sitter_intro', 'experience', 'availability', 'checks', 'agreement', 'listed'] },
      { id: 'leave_review', title: 'Review a stay', steps: ['past_stays', 'stay_detail', 'stars', 'comment', 'publish', 'reviewed'] },
    ],
  },
  {
    app: 'Windmere Ferries',
    what: 'foot and car ferry tickets between lake villages',
    slug: 'windmere',
    kinds: ['foot', 'car', 'bike', 'season'],
    flows: [
      { id: 'buy_crossing', title: 'Buy a crossing', steps: ['routes', 'sailings', 'passengers', 'vehicle', 'pay_fare', 'ticketed'] },
      { id: 'change_sailing', title: 'Change a sailing', steps: ['bookings', 'booking_card', 'new_sailing', 'fare_diff', 'settle', 'changed'] },
    ],
  },
  {
    app: 'Cindermoor Repair Cafe',
    what: 'booking volunteer repair sessions for household items',
    slug: 'cindermoor',
    kinds: ['lamp', 'toaster', 'bicycle', 'clothing', 'radio'],
    flows: [
      { id: 'book_repair', title: 'Book a repair slot', steps: ['sessions', 'session_page', 'item_form', 'photos', 'slot_hold', 'slot_booked'] },
      { id: 'volunteer', title: 'Volunteer as a fixer', steps: ['volunteer_intro', 'skills', 'dates', 'safety', 'sign', 'welcomed'] },
    ],
  },
  {
    app: 'Larkspur Tutoring Circle',
    what: 'a cooperative of tutors offering online lessons',
    slug: 'larkspur',
    kinds: ['maths', 'languages', 'music', 'science'],
    flows: [
      { id: 'book_tutor', title: 'Book a tutor', steps: ['subjects', 'tutor_list', 'tutor_profile', 'lesson_time', 'checkout', 'scheduled'] },
      { id: 'trial_lesson', title: 'Take a free trial', steps: ['trial_offer', 'goal', 'level', 'contact', 'pick_time', 'trial_set'] },
      { id: 'buy_bundle', title: 'Buy a lesson bundle', steps: ['bundles', 'bundle_card', 'size', 'payer', 'pay_bundle', 'bundle_active'] },
    ],
  },
];

/** Names a team might give each role's column. */
export const COLUMN_NAMES = {
  time: ['occurred_at', 'event_time', 'ts', 'created_at', 'happened_at', 'logged_at', 'client_ts'],
  name: ['event_name', 'event', 'action', 'evt', 'event_type', 'name'],
  user: ['user_id', 'account_id', 'member_id', 'uid', 'customer_ref', 'login_id'],
  device: ['device_id', 'install_id', 'anon_id', 'browser_id', 'client_id', 'cookie_id'],
  platform: ['platform', 'os', 'client', 'source_platform', 'app_platform', 'device_family'],
  version: ['app_version', 'version', 'build', 'client_version', 'release', 'app_build'],
  params: ['props', 'params', 'properties', 'attrs', 'payload', 'event_data', 'context'],
} as const;

export const TABLE_NAMES = ['events', 'raw_events', 'tracking', 'app_events', 'event_log', 'clickstream'] as const;

export type PlatformKind = 'web' | 'android' | 'ios';

/** Our names for a platform (the config's keys) and raw spellings teams send. */
export const PLATFORM_WORDS: Record<PlatformKind, { ours: readonly string[]; raw: readonly string[] }> = {
  web: { ours: ['web', 'site', 'browser'], raw: ['web', 'Web', 'WEB', 'website', 'browser', 'desktop_web'] },
  android: { ours: ['android', 'droid', 'android_app'], raw: ['Android', 'android', 'and', 'ANDROID', 'android_app', 'AND'] },
  ios: { ours: ['ios', 'iphone', 'ios_app'], raw: ['iOS', 'ios', 'IOS', 'iphone', 'apple_ios', 'iPhone OS'] },
};

/**
 * Business timezones: daylight-saving zones of both hemispheres (north:
 * spring forward in March, south: in September or October) and fixed offsets
 * (Etc/GMT+5 is five hours behind UTC: the sign is POSIX-style).
 */
export const TIMEZONES = [
  'America/New_York',
  'America/Denver',
  'Europe/London',
  'Europe/Berlin',
  'Europe/Helsinki',
  'Australia/Sydney',
  'Australia/Adelaide',
  'Pacific/Auckland',
  'America/Santiago',
  'America/Asuncion',
  'Etc/GMT+5',
  'Etc/GMT-3',
  'Etc/GMT-8',
  'Asia/Kolkata',
  'Asia/Tokyo',
  'Africa/Nairobi',
] as const;

/** Extra columns to break counts down by, with invented values. */
export const DIMENSIONS: ReadonlyArray<{ name: string; values: readonly string[] }> = [
  { name: 'region', values: ['north', 'south', 'east', 'west', 'central', 'coast', 'uplands', 'islands'] },
  { name: 'market', values: ['mk_a', 'mk_b', 'mk_c', 'mk_d', 'mk_e', 'mk_f', 'mk_g', 'mk_h'] },
  { name: 'acquisition', values: ['organic', 'paid_search', 'newsletter', 'partner', 'social', 'referral', 'poster', 'radio'] },
  { name: 'plan_tier', values: ['free', 'basic', 'plus', 'family', 'student', 'senior', 'trial', 'staff'] },
  { name: 'store_branch', values: ['b01', 'b02', 'b03', 'b04', 'b05', 'b06', 'b07', 'b08'] },
  { name: 'locale', values: ['en', 'fr', 'de', 'es', 'pt', 'nl', 'it', 'pl'] },
];

/** View events that carry the step in a parameter, and that parameter's names. */
export const VIEW_EVENTS = ['screen_view', 'page_view', 'view', 'screen_shown', 'pageview', 'ui_view'] as const;
export const VIEW_KEYS = ['screen', 'page', 'view_name', 'route', 'screen_name'] as const;
/** Result events of a flow's last step, their outcome key and the success value. */
export const RESULT_KEYS = ['outcome', 'status', 'result'] as const;
export const SUCCESS_VALUES = ['success', 'ok', 'approved', 'completed', 'done'] as const;
export const FAILURE_VALUES = ['failed', 'declined', 'cancelled', 'timeout', 'error'] as const;

/** Further parameters a step event may carry. */
export const PARAM_POOL: ReadonlyArray<{ key: string; type: 'integer' | 'number' | 'boolean' | 'kind' | 'source'; min?: number; max?: number }> = [
  { key: 'quantity', type: 'integer', min: 1, max: 6 },
  { key: 'amount_minor', type: 'integer', min: 300, max: 25000 },
  { key: 'duration_min', type: 'integer', min: 15, max: 180 },
  { key: 'rating', type: 'number', min: 0, max: 5 },
  { key: 'distance_km', type: 'number', min: 0, max: 40 },
  { key: 'is_returning', type: 'boolean' },
  { key: 'has_coupon', type: 'boolean' },
  { key: 'item_kind', type: 'kind' },
  { key: 'entry_source', type: 'source' },
];
export const SOURCES = ['home', 'search', 'push', 'link', 'banner'] as const;

/** How a release renames a parameter key. */
export function renamedKey(key: string, variant: number): string {
  const camel = key.replace(/_([a-z])/g, (_, c: string) => c.toUpperCase());
  const options = [camel !== key ? camel : `${key}_v2`, `${key}_id`, key.split('_')[0]!, `${key}_value`];
  return options[variant % options.length]!;
}

/** A value no release sent before: a new member of an enum. */
export const NEW_VALUES = ['other', 'unknown', 'mixed', 'legacy', 'beta', 'promo'] as const;
