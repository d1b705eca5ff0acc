package analysis

// sklearnStopWords is scikit-learn's ENGLISH_STOP_WORDS (sklearn/feature_extraction/_stop_words.py,
// 318 words, taken there from the Glasgow Information Retrieval Group's list), copied as data from
// Debian's python3-sklearn 1.2.1 and sorted. TestSklearnStopWords checks it against the reference
// tokens, which drop exactly these words.
//
// scikit-learn is under the BSD 3-Clause licence, whose notice follows:
//
// Copyright (c) 2007-2019 The scikit-learn developers.
// All rights reserved.
//
// Redistribution and use in source and binary forms, with or without
// modification, are permitted provided that the following conditions
// are met:
//  1. Redistributions of source code must retain the above copyright
//     notice, this list of conditions and the following disclaimer.
//  2. Redistributions in binary form must reproduce the above copyright
//     notice, this list of conditions and the following disclaimer in the
//     documentation and/or other materials provided with the distribution.
//  3. Neither the name of the copyright holder nor the names of its contributors
//     may be used to endorse or promote products derived from this software
//     without specific prior written permission.
//
// THIS SOFTWARE IS PROVIDED BY THE COPYRIGHT HOLDERS AND CONTRIBUTORS
// "AS IS" AND ANY EXPRESS OR IMPLIED WARRANTIES, INCLUDING, BUT NOT
// LIMITED TO, THE IMPLIED WARRANTIES OF MERCHANTABILITY AND FITNESS FOR
// A PARTICULAR PURPOSE ARE DISCLAIMED. IN NO EVENT SHALL THE COPYRIGHT
// HOLDER OR CONTRIBUTORS BE LIABLE FOR ANY DIRECT, INDIRECT, INCIDENTAL,
// SPECIAL, EXEMPLARY, OR CONSEQUENTIAL DAMAGES (INCLUDING, BUT NOT LIMITED
// TO, PROCUREMENT OF SUBSTITUTE GOODS OR SERVICES; LOSS OF USE, DATA, OR
// PROFITS; OR BUSINESS INTERRUPTION) HOWEVER CAUSED AND ON ANY THEORY OF
// LIABILITY, WHETHER IN CONTRACT, STRICT LIABILITY, OR TORT (INCLUDING
// NEGLIGENCE OR OTHERWISE) ARISING IN ANY WAY OUT OF THE USE OF THIS
// SOFTWARE, EVEN IF ADVISED OF THE POSSIBILITY OF SUCH DAMAGE.
const sklearnStopWords = "" +
	"a about above across after afterwards again against all almost alone along already also although " +
	"always am among amongst amoungst amount an and another any anyhow anyone anything anyway " +
	"anywhere are around as at back be became because become becomes becoming been before beforehand " +
	"behind being below beside besides between beyond bill both bottom but by call can cannot cant co " +
	"con could couldnt cry de describe detail do done down due during each eg eight either eleven " +
	"else elsewhere empty enough etc even ever every everyone everything everywhere except few " +
	"fifteen fifty fill find fire first five for former formerly forty found four from front full " +
	"further get give go had has hasnt have he hence her here hereafter hereby herein hereupon hers " +
	"herself him himself his how however hundred i ie if in inc indeed interest into is it its itself " +
	"keep last latter latterly least less ltd made many may me meanwhile might mill mine more " +
	"moreover most mostly move much must my myself name namely neither never nevertheless next nine " +
	"no nobody none noone nor not nothing now nowhere of off often on once one only onto or other " +
	"others otherwise our ours ourselves out over own part per perhaps please put rather re same see " +
	"seem seemed seeming seems serious several she should show side since sincere six sixty so some " +
	"somehow someone something sometime sometimes somewhere still such system take ten than that the " +
	"their them themselves then thence there thereafter thereby therefore therein thereupon these " +
	"they thick thin third this those though three through throughout thru thus to together too top " +
	"toward towards twelve twenty two un under until up upon us very via was we well were what " +
	"whatever when whence whenever where whereafter whereas whereby wherein whereupon wherever " +
	"whether which while whither who whoever whole whom whose why will with within without would yet " +
	"you your yours yourself yourselves"
