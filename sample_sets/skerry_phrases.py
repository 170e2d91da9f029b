"""Phrase pieces for the Skerry Line demo sets (an invented ferry company).

"[a|b]" picks one alternative; "{a}" style slots are filled in by build_sets.py.
"""
PORTS = ["Port Ellan", "Holm", "Varrow Sound", "Kettle Isle", "Brinmouth", "Fennick Isle",
         "Marrowick", "Tollan Pier", "Greyhaven Quay", "Osk Point"]
VESSELS = ["MV Tern Lass", "MV Kittiwake Rose", "MV Skerry Maid", "MV Ellan Dawn",
           "MV Halvard", "MV Brisk Petrel"]
DAYS = ["Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday"]
ITEMS = ["blue rucksack", "phone in a green case", "child's car seat", "pair of reading glasses",
         "black umbrella", "wedding ring", "walking stick", "tablet", "bag of shopping",
         "grey fleece", "camera", "toy rabbit", "set of car keys", "purse", "laptop bag"]
EVENTS = ["Holm music week", "Kettle Isle regatta", "Brinmouth show", "school holidays"]
NAMES = ["Morag", "Dev", "Aileen", "Tomasz", "Priya", "Callum", "Jo", "Mr Reid", "Fiona",
         "Kwame", "Ines", "Hamish", "Sal", "Mrs Okafor"]
MONTHS = ["March", "April", "May", "June", "July", "August", "September", "October"]

# Passenger desk messages, by the department that should answer them.
ROUTING = {
    "refund": [
        "I cancelled my {day} crossing from {a} to {b} in good time and [I still haven't had "
        "my money back|the money has not come back yet].",
        "You charged my card twice for the same ticket to {b}. [Please return the second "
        "payment.|I want one of them refunded.]",
        "The {time} from {a} [was cancelled|never sailed] because of the weather. How do I "
        "claim [my fare|the cost of the tickets] back?",
        "We booked a car space but ended up going as foot passengers, so we'd like the "
        "difference [refunded|paid back].",
        "There's been a death in the family and we won't travel on {day}. Can the tickets be "
        "refunded rather than moved?",
        "I was told at the {a} office a refund would take five days. It has been [three|four] "
        "weeks.",
        "Paid for a cabin on the {vessel} but the cabin [was locked all night|was never made "
        "up]. I want that part of the fare back.",
        "How long does a refund take to [reach|show up on] a credit card?",
        "Your website took my payment then [crashed|froze] and no ticket ever arrived. "
        "Please send the money back.",
        "The lift at {a} was broken so my husband could not board and we went home. We want "
        "[a full refund|our money back].",
        "Can I get my money back on an open return to {b} that I never used?",
        "I was charged the car rate but I was only on a bicycle. [Please refund the "
        "difference.|That's [£20|£24] too much.]",
        "You cancelled our booking, not us, and the refund [still says pending|hasn't "
        "appeared].",
        "We paid for priority boarding on the {time} and [didn't get it|were loaded last]. "
        "Can that charge be refunded?",
        "This is my third email about the refund for the {day} sailing. Where is my money?",
    ],
    "booking_change": [
        "Can I move my booking from {day} to the [following|next] {day2}?",
        "I need to change the name on my ticket, my [brother|sister] is travelling instead "
        "of me.",
        "We'd like to switch from the {time} to a later sailing [the same day|that "
        "afternoon].",
        "I booked {a} to {b} but [meant|wanted] {b} to {a}. Can you swap it round?",
        "Please add a second car to our booking for {day}.",
        "Is it possible to upgrade our existing booking to a cabin on the {vessel}?",
        "Our plans changed. Can we come back on {day2} instead and pay the difference?",
        "I put the wrong van length on my booking, it's [6|7] metres not [4|5].",
        "Can I add my dog to a booking I already have for {day}?",
        "Want to bring my return from {b} forward by a day, is there a fee for that?",
        "The {time} I booked no longer suits. Can you put us on the [next one|one after]?",
        "Please add one child to our party, she's [7|9|11].",
        "One of our group can't come now, please take him off the booking to {b}.",
        "I typed the wrong registration for my car on the {day} booking, [how do I fix "
        "it|can you correct it]?",
        "My train was late so I missed the {time} from {a}. Can I go on the next boat without "
        "paying again?",
    ],
    "lost_property": [
        "I left my {item} on the {vessel} [on the {time} from {a}|yesterday].",
        "My son dropped his {item} somewhere on the car deck [yesterday|on {day}].",
        "Has anyone handed in a {item}? I think I left it in the [lounge|cafe].",
        "Lost a {item} in the {a} terminal waiting room on {day}.",
        "I think my {item} fell out of my bag on the gangway at {b}.",
        "How do I collect something that was handed in at {b}?",
        "Forgot my {item} under a seat, window side, upper deck. [Crossing was|We sailed] "
        "{day} afternoon.",
        "Can you check lost and found for a {item}? We came over from {a} on the {time}.",
        "I found someone's {item} on the {vessel} and the crew were busy. Who should I hand "
        "it to?",
        "My {item} was taken to your office at {b}. Can it be posted to me?",
        "[Left|Forgot] a {item} in the toilets on the {vessel}, please tell me someone has "
        "it.",
        "My daughter is in bits, she left her {item} on the outside deck coming into {b}.",
    ],
    "accessibility": [
        "I use a wheelchair. Is there a lift from the car deck to the lounge on the {vessel}?",
        "My mother can't manage the gangway steps at {a}. Can someone help her [on "
        "board|board]?",
        "Is there an accessible toilet on the {time} sailing to {b}?",
        "I'm partially sighted and travelling alone to {b}. Can a member of staff meet me?",
        "Can I bring my assistance dog into the [lounge|passenger areas]?",
        "Do you have a quiet area on board? My son is autistic and finds the noise hard.",
        "I have a blue badge. Can I park close to the lift on the car deck?",
        "Is the ramp at {b} usable at low tide with a mobility scooter?",
        "Is there a hearing loop at the {a} ticket office?",
        "My wife uses oxygen. What do we need to tell you before we travel on {day}?",
        "Is there seating near the exit on the {vessel} for someone who can't manage "
        "stairs?",
        "Are announcements shown on screens as well? I'm deaf [and travel alone|and worry "
        "about missing them].",
        "My dad uses a walking frame, will he be able to get from the bus to the boat at "
        "{a}?",
    ],
    "timetable": [
        "What time is the first sailing from {a} on a {day}?",
        "Does the {time} from {a} to {b} still run on {day}s in winter?",
        "How long is the crossing from {a} to {b}?",
        "Is the {time} sailing [running on time|going ahead] today? The sea looks rough.",
        "When is the last boat back from {b} on {day}?",
        "Are there extra sailings during the {event}?",
        "Is the winter timetable out yet? [I'm trying to plan|Need to plan] a trip to {b}.",
        "How often do boats go between {a} and {b} at weekends?",
        "Does the {vessel} call at {b} on the way to {c}?",
        "Is the {day} service from {a} delayed? [Nothing on your site.|Your site says "
        "nothing.]",
        "What time should we check in for the {time} if we have a car?",
        "Is there a sailing from {b} late enough to get back after [a wedding|a concert]?",
        "Are the {day} sailings to {b} changing when the clocks go back?",
        "The board at {a} said the {time} but it [left early|went ten minutes early] and we "
        "[missed it|were left on the pier]. When is the next one?",
    ],
}
OPENERS = ["", "", "", "Hi.", "Hello!", "Good morning.", "Hiya!", "Dear Skerry Line:",
           "Quick question.", "Hi team.", "Sorry to bother you.", "URGENT."]
CLOSERS = ["", "", "", "Thanks.", "Cheers", "Thank you in advance.", "Please reply soon.",
           "Many thanks, {name}", "Regards, {name}", "Ta.", "Sent from my phone"]

# Booking reference emails: exactly one SK- reference each, plus some look-alikes.
REF_LINES = [
    "My booking reference is {ref}.",
    "Booking {ref}: can you confirm the car is on it?",
    "Ref. {ref}, {who}.",
    "I'm writing about my booking ({ref}) for the {day} sailing.",
    "The reference on my confirmation says {ref}, if that helps.",
    "{ref} is the booking in question.",
    "It's booking number {ref}, {who} travelling.",
]
SUBJECTS = ["Subject: booking {ref}", "Subject: Re: {ref}", "Subject: {ref} question"]
ASKS = [
    "Could we move to the {day2} sailing instead?",
    "Please can you add a bicycle to the booking?",
    "I'd like to cancel and get a refund.",
    "I left a {item} on board and wonder if it was handed in.",
    "My father will need help boarding at {a}.",
    "Is the {time} from {a} still running that day?",
    "The confirmation email has the wrong name on it.",
    "Can I change the vehicle to a small van?",
]
DISTRACTORS = [
    "You can ring me on 07700 900{n3}.",
    "We're travelling on {dnum} {month}.",
    "We'll be on the {vessel} if it's the usual boat.",
    "My old ticket no. {n5} was cancelled last month, please ignore it.",
    "The earlier booking, sk {n5}, was cancelled by phone.",
    "I paid with the card ending {n4}.",
    "Car reg is {reg}.",
    "Last year's reference was SKL{n5}, in case your system mixes them up.",
    "Order number SL/{n4}/{n3} came through on a separate email.",
    "The {time} is the one we want, not the {time2}.",
]
GREETINGS = ["Hello,", "Hi there,", "Dear Skerry Line,", "Good afternoon,", "To the desk,", ""]
SIGNOFFS = ["Thanks, {name}", "Regards,\n{name}", "{name}", "Cheers, {name}",
            "Best wishes, {name}"]

# Passenger reviews: one or two sentences of the same tone.
REVIEWS = {
    "positive": [
        "Crossing to {b} was [smooth|calm as a millpond] and the crew were lovely.",
        "Spotless lounge and [great|proper] coffee on the {vessel}.",
        "Boarding at {a} took ten minutes, really well organised.",
        "Staff helped my dad with his wheelchair without any fuss.",
        "Saw dolphins off {b}! [Brilliant|Magic] trip.",
        "On time both ways and good value for a family of four.",
        "The kids loved the outside deck.",
        "Booking online was dead easy[ and the e-ticket just worked|, took two minutes].",
        "Best soup I've had in ages, on a ferry of all places.",
        "Friendly welcome from the crew [and|plus] a warm lounge on a wet day.",
        "Would happily [sail|travel] with Skerry Line again.",
        "Lost my gloves and the {b} office had them waiting for me next day. Great service.",
        "[Lovely|Cracking] views of {b} coming in, [worth every penny|a real treat].",
        "The crew at {a} went out of their way to find us a space for the van.",
        "Clean, quiet and [on time|bang on schedule]. [Perfect.|Can't fault it.]",
        "Our dog was welcome in the lounge, which made the trip [so much easier|a joy].",
        "Rough sea but the crew kept everyone calm and cheerful.",
        "Really comfy seats on the {vessel} and [plenty of|lots of] space.",
    ],
    "negative": [
        "[Forty|Fifty] minutes late and no announcement [at all|about why].",
        "Toilets were filthy by the time we reached {b}.",
        "Staff at {a} were rude when I asked about the delay.",
        "Paid extra for a cabin and it [smelled of diesel|was freezing].",
        "The cafe ran out of [everything|hot food] an hour in.",
        "Cancelled at the last minute and no help finding somewhere to stay.",
        "The car deck queue at {a} was chaos.",
        "Your website charged me twice and nobody answers the phone.",
        "Broken seats and a [cold|draughty] lounge on the {vessel}.",
        "Never again. [Dreadful|Awful] trip.",
        "The lift was out of order and no one offered to help.",
        "Far too expensive for [what you get|a forty minute crossing].",
        "Waited [an hour|ninety minutes] at {a} in the rain with no shelter.",
        "The {vessel} was [so crowded|packed] there was nowhere to sit.",
        "Our booking vanished and we had to pay again at the kiosk. [Shocking.|Unbelievable.]",
        "Nobody checked on the foot passengers when the [heating|power] failed.",
        "Loud music in the lounge the whole way, [awful|horrible] for a tired family.",
        "[Rude|Unhelpful] crew and a dirty cafe. Not impressed.",
    ],
    "neutral": [
        "Took the {time} from {a} to {b}. Crossing was about [forty|fifty] minutes.",
        "Standard crossing. Nothing special, nothing wrong.",
        "Travelled as a foot passenger on a {day}; the boat was about half full.",
        "Bought the tickets at the kiosk rather than online.",
        "The {vessel} has a cafe, a lounge and an outside deck.",
        "[It's a ferry.|A ferry is a ferry.] It got us to {b}.",
        "Sailed on the {time} as [timetabled|scheduled].",
        "Some good bits, some not so good. About what I expected.",
        "Car deck was busy, lounge was quiet.",
        "Used the ferry to get to {b} for work. It does the job.",
        "Good crew, poor cafe. Evens out.",
        "First time on this route, from {a}.",
        "Crossed with a car on a {day} [morning|evening]. Check-in took about "
        "[twenty|thirty] minutes.",
        "The {b} terminal has a cafe and a small waiting room.",
        "Paid by card on board. [The fare|It] was the same as online.",
        "Ferry left {a} at the usual time. Sea was a bit choppy.",
        "Fine for a short hop. Nothing to add.",
        "Went over to {b} and back on the same day.",
    ],
}
